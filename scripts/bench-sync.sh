#!/usr/bin/env bash
# Sync benchmark: costdrift's sync of an N-line ledger CSV against the
# sqlite3 shell's .import of the same file into a table with the same unique
# key (entry_id, line), side by side in one run, on three ledger shapes
# (scripts/gengl describes them):
#   pairs     balanced two-line entries, ids zero-padded: lines arrive in key order
#   costonly  a cost-only export: every line has a cost centre, entries do not
#             balance, ids not zero-padded, so lines do not arrive in key order
#   journal   balanced entries of 2 to 60 lines, debit and credit columns, quoted
#             descriptions, entries in no date order, ids random in key order
# Rounds are interleaved (every shape's sync and .import once per round) and
# the best time of each is kept, so that other load on the machine falls on
# both sides alike. Prints per shape: lines, both times and peak RSS (the
# highest of the rounds), the ratio, and the size of both stores.
# Usage: scripts/bench-sync.sh [LINES [ROUNDS]]
set -euo pipefail
cd "$(dirname "$0")/.."
lines=${1:-1000000}
rounds=${2:-3}
shapes=(pairs costonly journal)
command -v sqlite3 >/dev/null || { echo "bench-sync needs the sqlite3 shell: apt-get install sqlite3" >&2; exit 1; }
[ -x /usr/bin/time ] || { echo "bench-sync needs GNU time: apt-get install time" >&2; exit 1; }

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/costdrift" ./cmd/costdrift
go build -o "$work/gengl" ./scripts/gengl
for shape in "${shapes[@]}"; do
  mkdir -p "$work/$shape/data/gl"
  "$work/gengl" -shape "$shape" -n "$lines" -o "$work/$shape/data/gl/gl.csv"
  cat > "$work/$shape/costdrift.yaml" <<YAML
store: costdrift.db
sources:
  ledger:
    - {name: gl, kind: csv, path: data/gl/*.csv}
YAML
done

measure() { # label, command...: prints "label seconds maxrss_kib"
  local label=$1; shift
  /usr/bin/time -f "%e %M" -o "$work/time" "$@" >/dev/null
  echo "$label $(cat "$work/time")"
}

# The .import table has the file's columns as text, the line number as an
# integer, and the unique key the store has: what a hand-made load would do.
sqlite_import() { # shape
  local dir=$work/$1 cols
  cols=$(head -1 "$dir/data/gl/gl.csv" | tr ',' '\n' | awk '{ printf "%s%s %s", sep, $1, ($1 == "line" ? "INTEGER NOT NULL" : "TEXT"); sep = ", " }')
  rm -f "$dir/import.db"
  sqlite3 "$dir/import.db" <<SQL
PRAGMA journal_mode = WAL;
CREATE TABLE gl_lines ($cols, UNIQUE (entry_id, line));
.import --csv --skip 1 $dir/data/gl/gl.csv gl_lines
SQL
}
export -f sqlite_import
export work

results=()
for round in $(seq "$rounds"); do
  for shape in "${shapes[@]}"; do
    rm -f "$work/$shape"/costdrift.db*
    results+=("$(measure "$shape costdrift" "$work/costdrift" --config "$work/$shape/costdrift.yaml" sync)")
    results+=("$(measure "$shape sqlite" bash -c "sqlite_import $shape")")
  done
done

printf '%-9s %9s  %8s %8s  %8s %8s  %6s  %9s %9s\n' shape lines "sync s" "RSS MiB" ".import" "RSS MiB" ratio "store MB" "import MB"
for shape in "${shapes[@]}"; do
  rows=$(sqlite3 "$work/$shape/costdrift.db" "SELECT COUNT(*) FROM gl_lines")
  [ "$rows" = "$lines" ] || { echo "$shape: costdrift stored $rows of $lines lines" >&2; exit 1; }
  store=$(du -cb "$work/$shape"/costdrift.db* | tail -1 | cut -f1)
  imported=$(du -cb "$work/$shape"/import.db* | tail -1 | cut -f1)
  printf '%s\n' "${results[@]}" | awk -v shape="$shape" -v lines="$lines" -v store="$store" -v imported="$imported" '
    $1 == shape && $2 == "costdrift" { if (!c || $3 < c) c = $3; if ($4 > cr) cr = $4 }
    $1 == shape && $2 == "sqlite"    { if (!s || $3 < s) s = $3; if ($4 > sr) sr = $4 }
    END { printf "%-9s %9d  %8.2f %8.0f  %8.2f %8.0f  %6.2f  %9.1f %9.1f\n", shape, lines, c, cr / 1024, s, sr / 1024, c / s, store / 1e6, imported / 1e6 }'
done
echo "best of $rounds interleaved rounds; RSS is the highest of them; ratio = sync / .import"
