#!/usr/bin/python3
"""Golden fits of costs restated by a price index (internal/pipeline/prices_crosscheck_test.go).

With analysis.deflator set, costdrift restates each cost at the newest
analysed period's prices before it fits a formula (README, Prices and
inflation):

  restated_t = cost_t * index_last / index_t

The index here is a published one: the quarterly US consumer price index
(column cpi) of the macrodata dataset that ships with statsmodels
(statsmodels.api.datasets.macrodata; compiled from FRED, Federal Reserve
Bank of St. Louis, public domain). Each case takes n consecutive quarters
of it, from a quiet stretch and from the high inflation of the 1970s, as
the index of n consecutive periods. The costs are invented: a seeded
random cost formula in real terms (fixed + rate * x, or fixed alone),
carried to nominal amounts by the index, with normal noise, rounded to
cents, against one driver x (whole numbers uniform in 200-900).

statsmodels fits the restated costs:

  constant       cost = a
  linear         cost = a + b*x
  proportional   cost = b*x, no constant

and reports nobs, params, bse, pvalues, rsquared (the straight line's) and
the residual standard error sqrt(scale). Run with Debian's interpreter and
packages:

    /usr/bin/python3 scripts/crosscheck/deflator.py testdata/crosscheck/deflator.json
"""

import sys

import numpy as np
import statsmodels.api as sm

from olsfit import floats, models, write_golden

SEED = 20261206

# (first row of macrodata, n): 1999Q1 on, 1973Q1 on (high inflation),
# 1985Q1 on, 1961Q1 on, 2000Q4 on (to the last quarter, 2009Q3).
WINDOWS = [(160, 24), (56, 36), (104, 30), (8, 48), (167, 36)]


def main():
    if len(sys.argv) != 2:
        raise SystemExit("usage: deflator.py OUTPUT.json")
    data = sm.datasets.macrodata.load_pandas().data
    rng = np.random.default_rng(SEED)
    cases = []
    for i, (first, n) in enumerate(WINDOWS):
        rows = data.iloc[first:first + n]
        cpi = rows["cpi"].to_numpy(dtype=float)
        quarters = ["%dQ%d" % (int(y), int(q)) for y, q in zip(rows["year"], rows["quarter"])]
        periods = ["%d-%02d" % (2023 + m // 12, m % 12 + 1) for m in range(n)]
        x = np.round(rng.uniform(200, 900, n))
        fixed = float(np.round(rng.uniform(1000, 6000), 2))
        rate = 0.0 if i % 2 == 1 else float(np.round(rng.uniform(1.5, 6.0), 3))
        real = fixed + rate * x
        noise = rng.normal(0, 0.02 * np.mean(real), n)
        nominal = np.round((real + noise) * cpi / cpi[0], 2)
        restated = nominal * cpi[-1] / cpi
        cases.append(dict(
            name="deflator-%d" % i, quarters=quarters, periods=periods, cpi=floats(cpi), x=floats(x),
            nominal=floats(nominal), restated=floats(restated), fixed_real=fixed, rate_real=rate,
            **models(restated, x),
        ))
    write_golden(sys.argv[1], "scripts/crosscheck/deflator.py", SEED, cases,
                 index="statsmodels.api.datasets.macrodata, column cpi (quarterly US CPI, FRED)")


if __name__ == "__main__":
    main()
