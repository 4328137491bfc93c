#!/usr/bin/env bash
# Soak test of the daemon (not in CI): `costdrift run` on a one-second
# schedule for DURATION seconds (default 600) while a new ledger file arrives
# every few seconds; every INTERVAL seconds (default 30) it samples the
# daemon's goroutines (go_goroutines on /metrics), open files (/proc/PID/fd),
# resident memory (VmRSS in /proc/PID/status) and, to tell Go's memory from
# SQLite's, the Go heap in use (go_memstats_heap_inuse_bytes) and the
# store's size on disk; then prints the table and the growth from the first
# sample to the last. With ROTATE=N the arriving files take N names in turn,
# so that each replaces (restates) an earlier one and the store's volume of
# postings stays level: memory must then stay level too (`make soak` runs
# it so, ROTATE=20). With ROTATE=0 every file is new and the store grows by
# 200 lines every 3 s; SQLite's page cache, and so the resident memory,
# grows with it up to the cache's bound (64 MiB a connection). BIN names
# another binary to soak, SCHEDULE another schedule than @every 1s. Needs bin/costdrift (make build) and curl.
set -euo pipefail
duration=${1:-600}
rotate=${ROTATE:-0}
interval=${2:-30}
bin=${BIN:-$(cd "$(dirname "$0")/.." && pwd)/bin/costdrift}
[ -x "$bin" ] || { echo "soak: $bin missing; run make build" >&2; exit 1; }

dir=$(mktemp -d)
trap 'kill "$writer" 2>/dev/null || true; kill "$daemon" 2>/dev/null || true; rm -rf "$dir"' EXIT
cd "$dir"
"$bin" --config costdrift.yaml init >/dev/null
port=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1])')
sed -i 's/cron: "0 6 \* \* \*"/cron: "'"${SCHEDULE:-@every 1s}"'"/; s/listen: ""/listen: "127.0.0.1:'"$port"'"/' costdrift.yaml
printf 'account,name\n6100,Rent\n6200,Energy\n6300,Maintenance\n' > data/accounts.csv
{
	echo "period,driver,value"
	for y in 2024 2025 2026; do for m in 01 02 03 04 05 06 07 08 09 10 11 12; do
		echo "$y-$m,machine_hours,$((900 + RANDOM % 300))"
	done; done
} > data/activity.csv

# A ledger file of 200 lines over 2024-2026, with entry ids of its own.
ledger() {
	awk -v n="$1" 'BEGIN {
		srand(n); print "entry_id,line,date,account,cost_center,amount,description"
		for (i = 0; i < 200; i++) {
			y = 2024 + int(rand() * 3); m = 1 + int(rand() * 12)
			printf "S%d-%d,1,%d-%02d-15,6%d00,WELD,%.2f,soak\n", n, i, y, m, 1 + i % 3, 50 + rand() * 900
		}
	}' > "data/gl/.soak-$1.tmp" && mv "data/gl/.soak-$1.tmp" "data/gl/soak-$1.csv"
}
ledger 0

# As config/costdrift.service runs it.
MALLOC_ARENA_MAX=${MALLOC_ARENA_MAX:-2} "$bin" --config costdrift.yaml run 2> daemon.log &
daemon=$!
sleep 2

# Then one every 3 seconds.
(
	n=0
	while sleep 3; do
		n=$((n + 1))
		if [ "$rotate" -gt 0 ]; then ledger $((n % rotate)); else ledger "$n"; fi
	done
) &
writer=$!

sample() {
	local g fd rss heap m db
	m=$(curl -fsS "http://127.0.0.1:$port/metrics")
	g=$(awk '$1 == "go_goroutines" {print $2}' <<<"$m")
	heap=$(awk '$1 == "go_memstats_heap_inuse_bytes" {printf "%d", $2 / 1024}' <<<"$m")
	fd=$(ls "/proc/$daemon/fd" | wc -l)
	rss=$(awk '/^VmRSS:/ {print $2}' "/proc/$daemon/status")
	db=$(du -ck costdrift.db* | tail -1 | cut -f1) # with the write-ahead log
	echo "$1 $g $fd $rss $heap $db"
}

samples=()
start=$(date +%s)
while :; do
	kill -0 "$daemon" 2>/dev/null || { echo "soak: the daemon died; log:"; tail -20 daemon.log; exit 1; }
	t=$(( $(date +%s) - start ))
	samples+=("$(sample "$t")")
	[ "$t" -ge "$duration" ] && break
	sleep "$interval"
done
kill "$writer"
kill -TERM "$daemon"
status=0
wait "$daemon" || status=$?

cycles=$(grep -c 'msg="cycle finished"' daemon.log || true)
failed=$(grep 'msg="cycle finished"' daemon.log | grep -c 'status=failed' || true)
skipped=$(grep -c 'tick skipped' daemon.log || true)
files=$(ls data/gl | wc -l)
printf '%8s %11s %11s %10s %10s %10s\n' seconds goroutines open_files rss_kib heap_kib store_kib
for s in "${samples[@]}"; do printf '%8s %11s %11s %10s %10s %10s\n' $s; done
first=(${samples[0]}); last=(${samples[-1]})
printf 'growth, first to last sample: goroutines %+d, open files %+d, RSS %+d KiB, Go heap %+d KiB, store %+d KiB\n' \
	$((last[1] - first[1])) $((last[2] - first[2])) $((last[3] - first[3])) $((last[4] - first[4])) $((last[5] - first[5]))
echo "store: $(du -ck costdrift.db* | tail -1 | cut -f1) KiB with its write-ahead log, $(ls data/gl | wc -l) ledger files"
echo "cycles: $cycles finished ($failed failed), $skipped ticks skipped; $files ledger files arrived; exit status after SIGTERM: $status"
grep 'level=ERROR' daemon.log | head -5 || true
[ "$status" -eq 0 ]
