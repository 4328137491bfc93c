#!/usr/bin/env bash
# Analysis benchmark: costdrift's analyze.Panel on an invented panel of
# 10,000 cost objects × 30 drivers × 2 lags × 36 months (package panelgen),
# beside a per-fit statsmodels OLS loop on a sample of the same data
# (extrapolated) and a vectorised numpy closed-form screen of every simple
# regression (the floor), in one run. The measurements are interleaved and
# repeated ROUNDS times (default 3) and the best of each is shown, because
# other work on the machine slows single runs. costdrift runs on all cores
# (GOMAXPROCS unset) and on one core, since the Python sides use one.
#
# Then the command as a user runs it, store to store: for each size in
# STORE_OBJECTS (default 10,000 and 100,000 objects), package storegen
# writes an invented company's ledger and activity CSV files (30
# company-wide drivers, 36 months and the drivers' month before) and a
# config, `costdrift sync` loads them, and `costdrift analyze` is timed
# under /usr/bin/time: wall and CPU seconds, peak resident set, and how much
# the store (with its -wal file) grew. Then the nightly increment: the next
# month's ledger and activity files are added, and `costdrift sync` plus
# `costdrift analyze` (which refits every object, since each has a new
# month) are timed together. The nightly runs NIGHTLY_ROUNDS times at up
# to 10,000 objects (once above: each round takes half a minute), each
# round on a copy of the analysed store that an untimed `costdrift sync`
# with nothing new has checked and stamped, as the night before's commands
# leave it (see README, The store); the table gives the median round.
#
# Usage: scripts/bench-analyze/run.sh        (make bench-analyze)
#        ROUNDS=5 ONE_CORE=0 PANEL_FLAGS="-objects 2000 -sample 50" STORE_OBJECTS=10000 scripts/bench-analyze/run.sh
# (ROUNDS: rounds, default 3; ONE_CORE=0 skips the one-core run;
# PANEL_FLAGS: flags for the Go program, see go run ./scripts/bench-analyze -h;
# STORE_OBJECTS: sizes of the end-to-end runs, "" for none;
# NIGHTLY_ROUNDS: rounds of the nightly increment, default 5)
# Needs /usr/bin/python3 with Debian's python3-statsmodels (numpy, scipy).
set -euo pipefail
cd "$(dirname "$0")/../.."
here=scripts/bench-analyze
PY=/usr/bin/python3 # Debian's, whatever python3 comes first on PATH
rounds=${ROUNDS:-3}
nightly_rounds=${NIGHTLY_ROUNDS:-5}
one_core=${ONE_CORE:-1}
read -r -a panel_flags <<<"${PANEL_FLAGS:-}"
read -r -a store_objects <<<"${STORE_OBJECTS-10000 100000}"

if ! "$PY" -c 'import statsmodels, scipy, numpy' 2>/dev/null; then
  echo "bench-analyze needs $PY with statsmodels, scipy and numpy:" >&2
  echo "  apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y python3-statsmodels" >&2
  exit 1
fi

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/bench-analyze" ./$here
go build -o "$work/storegen" ./$here/storegen
go build -o "$work/costdrift" ./cmd/costdrift
load_start=$(cut -d' ' -f1-3 /proc/loadavg)

log=$work/results
for round in $(seq "$rounds"); do
  write=()
  [ "$round" = 1 ] && write=(-write "$work/data")
  echo "round $round/$rounds ..." >&2
  "$work/bench-analyze" "${panel_flags[@]}" "${write[@]}" | sed "s/^/round=$round /" >>"$log"
  "$PY" $here/statsmodels_loop.py "$work/data" | sed "s/^/round=$round /" >>"$log"
  "$PY" $here/numpy_floor.py "$work/data" | sed "s/^/round=$round /" >>"$log"
  if [ "$one_core" = 1 ]; then
    GOMAXPROCS=1 "$work/bench-analyze" "${panel_flags[@]}" | sed "s/^/round=$round /" >>"$log"
  fi
done

# The command, store to store. Sizes in bytes of the store and its -wal.
store_bytes() {
  local sum=0 f
  for f in "$1"/costdrift.db "$1"/costdrift.db-wal; do
    [ -f "$f" ] && sum=$((sum + $(stat -c %s "$f")))
  done
  echo "$sum"
}
timed() { # label round dir objects command...: one RESULT line from /usr/bin/time
  local label=$1 round=$2 dir=$3 objects=$4
  shift 4
  local before after
  before=$(store_bytes "$dir")
  (cd "$dir" && /usr/bin/time -o "$work/time" -f '%e %U %S %M' "$@" >"$work/out" 2>&1) || {
    cat "$work/out" >&2
    exit 1
  }
  after=$(store_bytes "$dir")
  read -r wall user sys rss <"$work/time"
  echo "round=$round RESULT side=command step=$label objects=$objects wall_s=$wall cpu_s=$(echo "$user + $sys" | bc) peak_rss_mib=$((rss / 1024)) store_mb=$(echo "scale=1; $after / 1000000" | bc) growth_mb=$(echo "scale=1; ($after - $before) / 1000000" | bc)" >>"$log"
}
for n in "${store_objects[@]}"; do
  echo "command: $n objects ..." >&2
  books=$work/books-$n
  "$work/storegen" -objects "$n" -dir "$books"
  timed sync 1 "$books" "$n" "$work/costdrift" sync
  timed analyze 1 "$books" "$n" "$work/costdrift" analyze
  nightlies=$nightly_rounds
  [ "$n" -gt 10000 ] && nightlies=1
  cp -a "$books" "$books-analysed"
  for night in $(seq "$nightlies"); do
    rm -rf "$books"
    cp -a "$books-analysed" "$books"
    (cd "$books" && "$work/costdrift" sync >/dev/null) # checks the copy and stamps it
    cp "$books"/next/gl-next.csv "$books"/data/gl/
    cp "$books"/next/activity-next.csv "$books"/data/activity/
    timed nightly_sync "$night" "$books" "$n" "$work/costdrift" sync
    timed nightly_analyze "$night" "$books" "$n" "$work/costdrift" analyze
  done
  rm -rf "$books" "$books-analysed"
done
load_end=$(cut -d' ' -f1-3 /proc/loadavg)

echo "== every measurement =="
grep ' RESULT ' "$log" | sed 's/ RESULT / /'
echo
awk -v rounds="$rounds" -v load_start="$load_start" -v load_end="$load_end" \
  -v blas="OPENBLAS_CORETYPE=${OPENBLAS_CORETYPE-<unset>} OPENBLAS_NUM_THREADS=${OPENBLAS_NUM_THREADS-<unset>} OMP_NUM_THREADS=${OMP_NUM_THREADS-<unset>}" \
  -v cpus="$(nproc)" -v model="$(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ *//')" '
  function kv(   i, a) { delete f; for (i = 1; i <= NF; i++) if (split($i, a, "=") == 2) f[a[1]] = a[2] }
  function keep(key, wall, cpu) {
    if (!(key in best) || wall < best[key]) best[key] = wall
    if (!(key in bestcpu) || cpu < bestcpu[key]) bestcpu[key] = cpu
  }
  / RESULT / {
    kv()
    if (f["side"] == "ours") {
      key = "ours" f["procs"]; keep(key, f["wall_s"], f["cpu_s"]); procs[key] = f["procs"]
      if (f["peak_heap_mib"] > heap[key]) heap[key] = f["peak_heap_mib"]
      fits = f["fits"]; objects = f["objects"]; drivers = f["drivers_per_object"]; lags = f["lags"]; periods = f["periods"]
      extra = f["proportional_fits"] " proportional and " f["constant_fits"] " constant"
      sums[f["checksum"]] = 1
      if (f["procs"] > 1) multi = key
    } else if (f["side"] == "ours_line") {
      key = "line" f["procs"]; keep(key, f["wall_s"], f["cpu_s"])
      if (f["procs"] > 1) multiline = key
    } else if (f["side"] == "statsmodels") {
      keep("sm", f["extrapolated_s"], f["extrapolated_cpu_s"]); keep("smloop", f["wall_s"], f["cpu_s"])
      smfits = f["fits"]; smobj = f["sample_objects"]; smver = f["statsmodels"]; npver = f["numpy"]
    } else if (f["side"] == "numpy") {
      keep("np_" f["variant"], f["wall_s"], f["cpu_s"])
    } else if (f["side"] == "command") {
      # Every round of a step; the table gives the figures of the median round
      # (by wall time), the peak RSS of all rounds.
      k = f["objects"] SUBSEP f["step"]; i = ++cn[k]
      cw[k, i] = f["wall_s"]; cc[k, i] = f["cpu_s"]; cg[k, i] = f["growth_mb"]; cs[k, i] = f["store_mb"]
      if (f["peak_rss_mib"] > crss[k]) crss[k] = f["peak_rss_mib"]
      if (f["step"] == "nightly_analyze") { kn = f["objects"] SUBSEP "nightly"; cn[kn] = i; cw[kn, i] = cw[f["objects"] SUBSEP "nightly_sync", i] + f["wall_s"]; cc[kn, i] = cc[f["objects"] SUBSEP "nightly_sync", i] + f["cpu_s"] }
      if (!(f["objects"] in csizes)) { csizes[f["objects"]] = 1; corder[++ncmd] = f["objects"] }
    }
  }
  / AGREE / { sub(/^round=[0-9]+ AGREE /, ""); agree[$1] = $0 }
  function row(label, key, h) {
    if (!(key in best)) return
    printf "%-46s %8.2f %8.2f %10.0f %10.0f %10s\n", label, best[key], bestcpu[key], objects / best[key], fits / best[key], h
  }
  # median sets cwall, ccpu, cgrow and csize of step key k to those of
  # its median round by wall time (the lower middle of an even count).
  function median(k,   i, j, n, t, order, m) {
    n = cn[k]
    for (i = 1; i <= n; i++) order[i] = i
    for (i = 2; i <= n; i++)
      for (j = i; j > 1 && cw[k, order[j]] < cw[k, order[j - 1]]; j--) { t = order[j]; order[j] = order[j - 1]; order[j - 1] = t }
    m = order[int((n + 1) / 2)]
    cwall[k] = cw[k, m]; ccpu[k] = cc[k, m]; cgrow[k] = cg[k, m]; csize[k] = cs[k, m]
    return n
  }
  function ratio(label, a, b, note) {
    if ((a in best) && (b in best))
      printf "%-44s %7.1f x wall   %7.1f x CPU time   %s\n", label, best[a] / best[b], bestcpu[a] / bestcpu[b], note
  }
  END {
    nsums = 0; for (s in sums) nsums++
    printf "analysis benchmark: %d objects x %d drivers x %d lags x %d periods = %d linear fits (costdrift also makes %s fits)\n",
      objects, drivers, lags, periods, fits, extra
    printf "machine: %d cores, %s; %s\n", cpus, model, blas
    printf "statsmodels %s, numpy %s (/usr/bin/python3); best of %d interleaved rounds; same panel (checksum) in every Go run: %s\n",
      smver, npver, rounds, (nsums == 1 ? "yes" : "NO")
    printf "load average (1, 5, 15 min) at start: %s   at end: %s\n\n", load_start, load_end
    printf "%-46s %8s %8s %10s %10s %10s\n", "side", "wall s", "CPU s", "objects/s", "fits/s", "peak heap"
    if (multi != "") row("costdrift analyze.Panel, " procs[multi] " cores", multi, sprintf("%.0f MiB", heap[multi]))
    row("costdrift analyze.Panel, 1 core", "ours1", sprintf("%.0f MiB", heap["ours1"]))
    if (multiline != "") row("costdrift fit.Line alone, " procs[multi] " cores", multiline, "")
    row("costdrift fit.Line alone, 1 core", "line1", "")
    row(sprintf("statsmodels OLS loop, 1 core (%d obj, x%d)", smobj, objects / smobj), "sm", "")
    row("numpy closed form: b, a, R2, t (floor)", "np_basic", "")
    row("numpy closed form: b, a, R2, t, p, PRESS", "np_p_press", "")
    printf "(statsmodels: best %.2f s wall, %.2f s CPU for %d fits on %d objects, multiplied by %d; objects/s and fits/s are for the whole panel)\n\n",
      best["smloop"], bestcpu["smloop"], smfits, smobj, objects / smobj
    if (multi != "") ratio("statsmodels loop / costdrift " procs[multi] " cores", "sm", multi, "target >= 50 x (wall)")
    ratio("statsmodels loop / costdrift 1 core", "sm", "ours1", "same number of cores")
    ratio("statsmodels loop / fit.Line alone, 1 core", "sm", "line1", "the same fits, nothing else")
    if (multi != "") {
      ratio("costdrift " procs[multi] " cores / numpy floor", multi, "np_basic", "")
      ratio("costdrift " procs[multi] " cores / numpy with p and PRESS", multi, "np_p_press", "")
    }
    ratio("costdrift 1 core / numpy floor", "ours1", "np_basic", "")
    if (ncmd > 0) {
      print ""
      printf "the command as a user runs it, store to store (30 company-wide drivers x 2 lags x 36 months; the nightly: median round):\n"
      printf "%-10s %-36s %8s %8s %10s %10s %10s\n", "objects", "step", "wall s", "CPU s", "peak RSS", "store MB", "growth MB"
      for (i = 1; i <= ncmd; i++) {
        n = corder[i]
        split("sync analyze nightly_sync nightly_analyze", steps, " ")
        label["sync"] = "costdrift sync (36 months)"; label["analyze"] = "costdrift analyze (every object)"
        label["nightly_sync"] = "nightly: costdrift sync (one month)"; label["nightly_analyze"] = "nightly: costdrift analyze (every object)"
        for (j = 1; j <= 4; j++) {
          k = n SUBSEP steps[j]
          if (k in cn) {
            rs = median(k)
            printf "%-10s %-36s %8.2f %8.2f %6d MiB %10.1f %10.1f%s\n", n, label[steps[j]], cwall[k], ccpu[k], crss[k], csize[k], cgrow[k], (rs > 1 ? "   median of " rs : "")
          }
        }
        k = n SUBSEP "nightly"
        if (k in cn) {
          rs = median(k)
          all = ""; for (r = 1; r <= rs; r++) all = all sprintf(" %.2f", cw[k, r])
          printf "%-10s %-36s %8.2f %8.2f%s\n", n, "nightly: sync + analyze", cwall[k], ccpu[k], (rs > 1 ? "                                  median of" all : "")
        }
      }
    }
    print ""
    print "what each side computes:"
    print "  costdrift analyze.Panel  the whole analysis of every object: constant, linear and proportional fits on every"
    print "                           candidate, Holm correction, PRESS ranking, then the models and checks of internal/analyze"
    print "  fit.Line alone           only the linear fits, one fit.Line call each: coef, se, t, p, R2, adj. R2, F and p,"
    print "                           residuals, s, leverage, Cook distance, PRESS, AIC, AICc, BIC"
    print "  statsmodels loop         the same per fit: OLS(y, add_constant(x)).fit(), get_influence() (hat, Cook, PRESS),"
    print "                           AICc from llf; timed on the sample, multiplied up to all objects"
    print "  numpy closed form        slope, intercept, R2, t of every fit at once (second row: also p and PRESS)"
    print "  the command              costdrift analyze on a synced store: reads the ledger, analyses every object,"
    print "                           writes fits and behaviours, raises the alerts and writes the mail to the outbox"
    print ""
    for (k in agree) print agree[k]
  }' "$log"
grep -m1 ' INFO ' "$log" | sed 's/^round=[0-9]* INFO /panel: /'
