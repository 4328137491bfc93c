#!/usr/bin/env bash
# Sync benchmark: costdrift's sync of an N-line ledger CSV against the
# sqlite3 shell's .import of the same file into a table with the same unique
# key, measured side by side in one run. Prints both times, the ratio and
# peak memory. Usage: scripts/bench-sync.sh [LINES]
set -euo pipefail
cd "$(dirname "$0")/.."
lines=${1:-1000000}
command -v sqlite3 >/dev/null || { echo "bench-sync needs the sqlite3 shell: apt-get install sqlite3" >&2; exit 1; }
[ -x /usr/bin/time ] || { echo "bench-sync needs GNU time: apt-get install time" >&2; exit 1; }

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
mkdir -p "$work/data/gl"
go build -o "$work/costdrift" ./cmd/costdrift
go run ./scripts/gengl -n "$lines" -o "$work/data/gl/gl.csv"
cat > "$work/costdrift.yaml" <<YAML
store: costdrift.db
sources:
  ledger:
    - {name: gl, kind: csv, path: data/gl/*.csv}
YAML

measure() { # label, command...: prints "label seconds maxrss_kib"
  local label=$1; shift
  /usr/bin/time -f "%e %M" -o "$work/time.$label" "$@" >/dev/null
  echo "$label $(cat "$work/time.$label")"
}

sqlite_import() {
  rm -f "$work/import.db"
  sqlite3 "$work/import.db" <<SQL
PRAGMA journal_mode = WAL;
CREATE TABLE gl_lines (entry_id TEXT NOT NULL, line INTEGER NOT NULL, date TEXT NOT NULL, account TEXT NOT NULL,
  cost_center TEXT NOT NULL, amount TEXT NOT NULL, description TEXT, UNIQUE (entry_id, line));
.import --csv --skip 1 $work/data/gl/gl.csv gl_lines
SQL
}
export -f sqlite_import
export work

# Alternate the two, twice each, and keep the faster run of each.
results=()
for round in 1 2; do
  rm -f "$work"/costdrift.db*
  results+=("$(measure "costdrift$round" "$work/costdrift" --config "$work/costdrift.yaml" sync)")
  results+=("$(measure "sqlite$round" bash -c sqlite_import)")
done
printf '%s\n' "${results[@]}" | awk -v lines="$lines" '
  /^costdrift/ { t = $2; if (!c || t < c) c = t; if ($3 > cr) cr = $3 }
  /^sqlite/    { t = $2; if (!s || t < s) s = t; if ($3 > sr) sr = $3 }
  END {
    printf "lines                 %d\n", lines
    printf "costdrift sync        %.2f s   peak RSS %.0f MiB\n", c, cr / 1024
    printf "sqlite3 .import       %.2f s   peak RSS %.0f MiB\n", s, sr / 1024
    printf "ratio (sync/.import)  %.2f\n", c / s
  }'
rows=$(sqlite3 "$work/costdrift.db" "SELECT COUNT(*) FROM gl_lines")
[ "$rows" = "$lines" ] || { echo "costdrift stored $rows of $lines lines" >&2; exit 1; }
