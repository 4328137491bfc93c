#!/usr/bin/python3
"""Numeric diff of two golden JSON files written by generate.py, steps.R or drift.R.

Usage: compare.py COMMITTED.json FRESH.json

Structure (keys, list lengths, strings) must match exactly, except under the
top-level "versions" key, whose differences are printed but do not fail.
Numbers must agree to |a - b| <= 1e-9 * max(|a|, |b|) + 1e-15: a rerun with
the same library versions reproduces them bit for bit; the slack admits a
rebuilt BLAS. Exits 1 and lists every difference otherwise.
"""

import json
import math
import sys

REL, ABS = 1e-9, 1e-15


def walk(a, b, path, problems):
    if isinstance(a, dict) and isinstance(b, dict):
        if set(a) != set(b):
            problems.append("%s: keys %s vs %s" % (path, sorted(a), sorted(b)))
            return
        for k in a:
            walk(a[k], b[k], "%s.%s" % (path, k), problems)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            problems.append("%s: %d vs %d entries" % (path, len(a), len(b)))
            return
        for i, (u, v) in enumerate(zip(a, b)):
            walk(u, v, "%s[%d]" % (path, i), problems)
    elif isinstance(a, (int, float)) and isinstance(b, (int, float)) \
            and not isinstance(a, bool) and not isinstance(b, bool):
        a, b = float(a), float(b)
        if math.isnan(a) or math.isnan(b) or math.isinf(a) or math.isinf(b):
            same = (math.isnan(a) and math.isnan(b)) or a == b
        else:
            same = abs(a - b) <= REL * max(abs(a), abs(b)) + ABS
        if not same:
            problems.append("%s: %r vs %r" % (path, a, b))
    elif a != b:
        problems.append("%s: %r vs %r" % (path, a, b))


def main():
    if len(sys.argv) != 3:
        raise SystemExit("usage: compare.py COMMITTED.json FRESH.json")
    with open(sys.argv[1]) as f:
        old = json.load(f)
    with open(sys.argv[2]) as f:
        new = json.load(f)
    if old.get("versions") != new.get("versions"):
        print("note: %s was generated with %s, this run used %s"
              % (sys.argv[1], old.get("versions"), new.get("versions")))
    old.pop("versions", None)
    new.pop("versions", None)
    problems = []
    walk(old, new, "$", problems)
    if problems:
        print("%s: %d differences from a fresh run:" % (sys.argv[1], len(problems)))
        for p in problems[:50]:
            print("  " + p)
        if len(problems) > 50:
            print("  ... and %d more" % (len(problems) - 50))
        sys.exit(1)
    print("%s: reproduced" % sys.argv[1])


if __name__ == "__main__":
    main()
