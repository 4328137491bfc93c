#!/usr/bin/env bash
# Cross-checks of internal/fit, internal/drift, the analysis of periods
# left out by the accountant and of costs restated by a price index against
# general-purpose libraries.
#
# 1. Regenerates the golden files into a temporary folder with the Debian
#    packages named below and compares them numerically with the committed
#    ones in testdata/crosscheck/ (compare.py).
# 2. Runs the Go tests that read the committed files.
#
# Needs: python3-statsmodels, python3-scipy, python3-numpy, python3-mpmath
# (used through /usr/bin/python3, not a virtualenv), r-base-core and
# r-cran-strucchange. With CI=true a missing one is an error; otherwise the
# regeneration is skipped with a message and only the Go tests run.
set -euo pipefail
cd "$(dirname "$0")/../.."

PY=/usr/bin/python3
here=scripts/crosscheck
golden=testdata/crosscheck

missing=()
if ! [ -x "$PY" ] || ! "$PY" -c 'import statsmodels, scipy, numpy, mpmath' 2>/dev/null; then
  missing+=("python3-statsmodels python3-scipy python3-numpy python3-mpmath (for $PY)")
fi
if ! command -v Rscript >/dev/null 2>&1; then
  missing+=("r-base-core (Rscript)")
elif ! Rscript -e 'suppressPackageStartupMessages(library(strucchange))' >/dev/null 2>&1; then
  missing+=("r-cran-strucchange")
fi

if [ ${#missing[@]} -gt 0 ]; then
  for m in "${missing[@]}"; do echo "crosscheck: missing ${m}" >&2; done
  if [ "${CI:-}" = "true" ]; then
    echo "crosscheck: FAILED: CI=true and the reference libraries above are not installed" >&2
    exit 1
  fi
  echo "crosscheck: regeneration skipped (not CI); running the Go tests on the committed files only" >&2
else
  tmp=$(mktemp -d)
  trap 'rm -rf "$tmp"' EXIT
  "$PY" "$here/generate.py" "$tmp/cases.json"
  "$PY" "$here/intervals.py" "$tmp/intervals.json"
  "$PY" "$here/exclusions.py" "$tmp/exclusions.json"
  "$PY" "$here/deflator.py" "$tmp/deflator.json"
  Rscript "$here/steps.R" "$tmp/steps.json"
  Rscript "$here/drift.R" "$tmp/drift.json"
  status=0
  "$PY" "$here/compare.py" "$golden/cases.json" "$tmp/cases.json" || status=1
  "$PY" "$here/compare.py" "$golden/intervals.json" "$tmp/intervals.json" || status=1
  "$PY" "$here/compare.py" "$golden/exclusions.json" "$tmp/exclusions.json" || status=1
  "$PY" "$here/compare.py" "$golden/deflator.json" "$tmp/deflator.json" || status=1
  "$PY" "$here/compare.py" "$golden/steps.json" "$tmp/steps.json" || status=1
  "$PY" "$here/compare.py" "$golden/drift.json" "$tmp/drift.json" || status=1
  if [ $status -ne 0 ]; then
    echo "crosscheck: FAILED: the committed golden files are not what the libraries compute now" >&2
    exit 1
  fi
fi

go test -count=1 -run 'Crosscheck|NIST' ./internal/fit/
go test -count=1 -run 'Crosscheck|Nile' ./internal/drift/
go test -count=1 -run 'Crosscheck' ./internal/pipeline/
