#!/usr/bin/python3
"""Golden prediction intervals for budgets (internal/fit/terms_test.go).

For each seeded case, statsmodels fits the cost formula's model and reports
get_prediction(...).summary_frame(alpha) at new activity levels, at 80 % and
95 %: mean, se_obs, obs_ci_lower, obs_ci_upper. The models are the four
forms a cost formula takes:

  constant       cost = a                        (fixed and unexplained costs)
  proportional   cost = b*x, no constant         (variable costs)
  linear         cost = a + b*x                  (mixed costs)
  two_driver     cost = a + b*x1 + b2*x2
  step           cost = level of x's group: OLS on one indicator per group,
                 no constant (step costs; groups given, not searched)

The data are random draws from numpy's default_rng with the seeds below and
stand for nothing real. Run with Debian's interpreter and packages:

    /usr/bin/python3 scripts/crosscheck/intervals.py testdata/crosscheck/intervals.json
"""

import json
import sys

import numpy as np
import scipy
import statsmodels
import statsmodels.api as sm

SEED = 20261202
ALPHAS = (0.2, 0.05)  # 80 % and 95 % intervals


def floats(a):
    return [float(v) for v in np.asarray(a, dtype=float).ravel()]


def intervals(res, rows):
    out = []
    for row in rows:
        pr = res.get_prediction(np.array([row]))
        point = dict(row=floats(row), mean=float(pr.predicted_mean[0]), se_obs=float(pr.se_obs[0]))
        for alpha in ALPHAS:
            frame = pr.summary_frame(alpha=alpha)
            key = "%d" % round(100 * (1 - alpha))
            point["low" + key] = float(frame["obs_ci_lower"].iloc[0])
            point["high" + key] = float(frame["obs_ci_upper"].iloc[0])
        out.append(point)
    return out


def main():
    if len(sys.argv) != 2:
        raise SystemExit("usage: intervals.py OUTPUT.json")
    rng = np.random.default_rng(SEED)
    cases = []
    for i in range(4):
        n = (12, 24, 36, 60)[i]
        x = rng.uniform(200, 900, n)
        x2 = 0.5 * x + rng.uniform(50, 300, n)
        new = [float(v) for v in (150.0, float(np.mean(x)), 1000.0)]
        new2 = [float(v) for v in (100.0, float(np.mean(x2)), 900.0)]
        noise = rng.normal(0, (5, 40, 150, 400)[i], n)

        y = 4000 + noise
        res = sm.OLS(y, np.ones((n, 1))).fit()
        cases.append(dict(name="constant-%d" % i, model="constant", x=[], y=floats(y), df=int(res.df_resid),
                          points=intervals(res, [[1.0]])))

        y = 12.5 * x + noise * np.sqrt(x / np.mean(x))
        res = sm.OLS(y, x.reshape(-1, 1)).fit()
        cases.append(dict(name="proportional-%d" % i, model="proportional", x=[floats(x)], y=floats(y),
                          df=int(res.df_resid), points=intervals(res, [[v] for v in new])))

        y = 1500 + 6.25 * x + noise
        res = sm.OLS(y, sm.add_constant(x)).fit()
        cases.append(dict(name="linear-%d" % i, model="linear", x=[floats(x)], y=floats(y),
                          df=int(res.df_resid), points=intervals(res, [[1.0, v] for v in new])))

        y = 900 + 3.0 * x + 4.5 * x2 + noise
        res = sm.OLS(y, sm.add_constant(np.column_stack([x, x2]))).fit()
        cases.append(dict(name="two_driver-%d" % i, model="two_driver", x=[floats(x), floats(x2)], y=floats(y),
                          df=int(res.df_resid),
                          points=intervals(res, [[1.0, a, b] for a, b in zip(new, new2)])))

        # Step: groups by activity, levels well apart, each group >= 3.
        k = 2 + i % 3
        edges = np.quantile(x, np.linspace(0, 1, k + 1))
        group = np.clip(np.searchsorted(edges, x, side="right") - 1, 0, k - 1)
        levels = np.array([6000.0, 9000.0, 12000.0, 15000.0])[:k]
        y = levels[group] + noise
        dummies = np.zeros((n, k))
        dummies[np.arange(n), group] = 1.0
        res = sm.OLS(y, dummies).fit()
        rows = [list(np.eye(k)[g]) for g in range(k)]
        cases.append(dict(name="step-%d" % i, model="step", x=[floats(x)], y=floats(y), groups=[int(g) for g in group],
                          df=int(res.df_resid), points=intervals(res, rows)))
    doc = dict(
        generator="scripts/crosscheck/intervals.py",
        versions=dict(python=sys.version.split()[0], numpy=np.__version__, scipy=scipy.__version__,
                      statsmodels=statsmodels.__version__),
        seed=SEED, alphas=list(ALPHAS), cases=cases,
    )
    with open(sys.argv[1], "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
