#!/usr/bin/python3
"""Golden fits of cost series with periods excluded (internal/pipeline/exclusions_test.go).

An accountant may leave periods out of an object's fit (README "The
accountant's decisions"): they are not fitted and not counted in n. For each
seeded case, a monthly cost series against one driver, with one to four
periods excluded (some carrying a planted one-off of 20-60 % of the cost),
statsmodels fits the remaining periods alone:

  constant       cost = a
  linear         cost = a + b*x
  proportional   cost = b*x, no constant

and reports nobs, params, bse, pvalues, rsquared (centred for the constant
and linear models) and the residual standard error sqrt(scale).

The data are random draws from numpy's default_rng with the seed below and
stand for nothing real. Run with Debian's interpreter and packages:

    /usr/bin/python3 scripts/crosscheck/exclusions.py testdata/crosscheck/exclusions.json
"""

import sys

import numpy as np

from olsfit import floats, models, write_golden

SEED = 20261205


def main():
    if len(sys.argv) != 2:
        raise SystemExit("usage: exclusions.py OUTPUT.json")
    rng = np.random.default_rng(SEED)
    cases = []
    for i in range(8):
        n = (18, 24, 30, 36)[i % 4]
        periods = ["%d-%02d" % (2023 + m // 12, m % 12 + 1) for m in range(n)]
        x = np.round(rng.uniform(300, 1500, n))
        fixed, rate = (1850.0, 2.35) if i < 4 else (4200.0, 0.0)
        noise = rng.normal(0, (0.02, 0.05)[i % 2] * (fixed + rate * np.mean(x)), n)
        y = np.round(fixed + rate * x + noise, 2)
        k = 1 + i % 4
        excluded = sorted(int(j) for j in rng.choice(n, size=k, replace=False))
        for j in excluded[: max(1, k // 2)]:
            y[j] = np.round(y[j] * (1.2 + 0.4 * rng.uniform()), 2)  # the one-off the accountant leaves out
        keep = np.array([j not in excluded for j in range(n)])
        xs, ys = x[keep], y[keep]
        cases.append(dict(
            name="exclusions-%d" % i, periods=periods, x=floats(x), y=floats(y),
            excluded=[periods[j] for j in excluded],
            **models(ys, xs),
        ))
    write_golden(sys.argv[1], "scripts/crosscheck/exclusions.py", SEED, cases)


if __name__ == "__main__":
    main()
