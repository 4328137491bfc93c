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
# Usage: scripts/bench-analyze/run.sh        (make bench-analyze)
#        ROUNDS=5 ONE_CORE=0 PANEL_FLAGS="-objects 2000 -sample 50" scripts/bench-analyze/run.sh
# (ROUNDS: rounds, default 3; ONE_CORE=0 skips the one-core run;
# PANEL_FLAGS: flags for the Go program, see go run ./scripts/bench-analyze -h)
# Needs /usr/bin/python3 with Debian's python3-statsmodels (numpy, scipy).
set -euo pipefail
cd "$(dirname "$0")/../.."
here=scripts/bench-analyze
PY=/usr/bin/python3 # Debian's, whatever python3 comes first on PATH
rounds=${ROUNDS:-3}
one_core=${ONE_CORE:-1}
read -r -a panel_flags <<<"${PANEL_FLAGS:-}"

if ! "$PY" -c 'import statsmodels, scipy, numpy' 2>/dev/null; then
  echo "bench-analyze needs $PY with statsmodels, scipy and numpy:" >&2
  echo "  apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y python3-statsmodels" >&2
  exit 1
fi

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/bench-analyze" ./$here
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
    }
  }
  / AGREE / { sub(/^round=[0-9]+ AGREE /, ""); agree[$1] = $0 }
  function row(label, key, h) {
    if (!(key in best)) return
    printf "%-46s %8.2f %8.2f %10.0f %10.0f %10s\n", label, best[key], bestcpu[key], objects / best[key], fits / best[key], h
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
    print ""
    print "what each side computes:"
    print "  costdrift analyze.Panel  the whole analysis of every object: constant, linear and proportional fits on every"
    print "                           candidate, Holm correction, PRESS ranking, then the models and checks of internal/analyze"
    print "  fit.Line alone           only the linear fits, one fit.Line call each: coef, se, t, p, R2, adj. R2, F and p,"
    print "                           residuals, s, leverage, Cook distance, PRESS, AIC, AICc, BIC"
    print "  statsmodels loop         the same per fit: OLS(y, add_constant(x)).fit(), get_influence() (hat, Cook, PRESS),"
    print "                           AICc from llf; timed on the sample, multiplied up to all objects"
    print "  numpy closed form        slope, intercept, R2, t of every fit at once (second row: also p and PRESS)"
    print ""
    for (k in agree) print agree[k]
  }' "$log"
grep -m1 ' INFO ' "$log" | sed 's/^round=[0-9]* INFO /panel: /'
