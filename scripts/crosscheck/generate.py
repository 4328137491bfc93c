#!/usr/bin/python3
"""Golden values for internal/fit's cross-check test (crosscheck_test.go).

Generates seeded regression cases and records what general-purpose libraries
compute for them: statsmodels (OLS, influence, Durbin-Watson, VIF, prediction
intervals, nested F test, Huber RLM) and SciPy (Theil-Sen). The data are
random draws from numpy's default_rng with the fixed seeds below; they stand
for nothing real.

Run with Debian's interpreter and packages (python3-statsmodels,
python3-scipy, python3-numpy, python3-mpmath), not a virtualenv:

    /usr/bin/python3 scripts/crosscheck/generate.py testdata/crosscheck/cases.json

scripts/crosscheck/run.sh regenerates into a temporary folder and compares
with the committed file.
"""

import json
import math
import sys

import mpmath
import numpy as np
import scipy
import scipy.stats
import statsmodels
import statsmodels.api as sm
from statsmodels.stats.outliers_influence import variance_inflation_factor
from statsmodels.stats.stattools import durbin_watson
from statsmodels.tools import eval_measures

mpmath.mp.dps = 40

MASTER_SEED = 20240601  # draws the design of every case
ALPHA = 0.05            # prediction intervals at 95 %
HUBER_T = 1.345
HUBER_MAXITER = 1000


def floats(a):
    return [float(v) for v in np.asarray(a, dtype=float).ravel()]


def make_cases():
    """Case designs: 42 single-driver lines, 10 two-driver fits."""
    master = np.random.default_rng(MASTER_SEED)
    cases = []
    for i in range(52):
        seed = 1000 + i
        rng = np.random.default_rng(seed)
        two = i >= 42
        # Sizes cover both ends of 12..60; the rest are drawn.
        n = 12 if i in (0, 42) else 60 if i in (1, 43) else int(master.integers(12, 61))
        intercept = float(master.uniform(0, 5000))
        slope = float(master.uniform(-5, 30))
        noise_share = float(master.choice([0.002, 0.02, 0.1, 0.3, 1.0]))
        outliers = int(master.integers(1, 4)) if 30 <= i < 38 else 0
        offset = 1e5 if i in (20, 21) else 0.0  # activity far from zero
        x1 = offset + rng.uniform(50, 500, n)
        cols = [x1]
        mean = intercept + slope * (x1 - offset)
        if two:
            corr = float(master.choice([0.0, 0.5, 0.9, 0.98]))
            z = rng.uniform(50, 500, n)
            x2 = corr * (x1 - offset) + math.sqrt(1 - corr * corr) * z
            slope2 = float(master.uniform(-3, 10))
            cols.append(x2)
            mean = mean + slope2 * x2
        spread = float(np.std(mean)) if float(np.std(mean)) > 0 else 1.0
        y = mean + rng.normal(0, noise_share * spread + 1.0, n)
        for _ in range(outliers):
            j = int(rng.integers(0, n))
            y[j] += float(rng.choice([-1, 1])) * float(rng.uniform(8, 15)) * (noise_share * spread + 1.0)
        name = ("two-%02d" % i) if two else ("line-%02d" % i)
        cases.append(dict(name=name, seed=seed, outliers=outliers, x=cols, y=y))
    return cases


def new_points(cols):
    """Three new activity levels: below, at the middle of and above the data."""
    pts = []
    for q in (-0.1, 0.5, 1.1):
        pts.append([float(c.min() + q * (c.max() - c.min())) for c in cols])
    return pts


def t_quantile_mp(alpha, df):
    """Two-sided Student t critical value to 40 digits: the t with
    Pr(|T_df| > t) = I_{df/(df+t^2)}(df/2, 1/2) = alpha, solved by mpmath.
    SciPy 1.10's t.ppf, which statsmodels' intervals use, is off by up to
    about 2e-9 relative for some df; this is the exact reference."""
    nu = mpmath.mpf(df)
    half = mpmath.mpf(1) / 2
    f = lambda t: mpmath.betainc(nu / 2, half, 0, nu / (nu + t * t), regularized=True) - mpmath.mpf(alpha)
    return float(mpmath.findroot(f, mpmath.mpf(float(scipy.stats.t.isf(alpha / 2, df)))))


def golden(case):
    cols, y = case["x"], case["y"]
    n = len(y)
    X = sm.add_constant(np.column_stack(cols), has_constant="add")
    res = sm.OLS(y, X).fit()
    infl = res.get_influence()
    k = X.shape[1]
    out = dict(
        name=case["name"], seed=case["seed"], outliers=case["outliers"],
        x=[floats(c) for c in cols], y=floats(y),
        ols=dict(
            params=floats(res.params), bse=floats(res.bse), tvalues=floats(res.tvalues),
            pvalues=floats(res.pvalues), rsquared=float(res.rsquared),
            rsquared_adj=float(res.rsquared_adj), fvalue=float(res.fvalue),
            f_pvalue=float(res.f_pvalue), ssr=float(res.ssr), df_resid=float(res.df_resid),
            llf=float(res.llf), aic=float(res.aic), bic=float(res.bic),
            # AICc with the error variance counted (k + 1 parameters), the
            # convention of internal/fit; statsmodels' own aic/bic count k.
            aicc_with_variance=float(eval_measures.aicc(res.llf, n, k + 1)),
            hat=floats(infl.hat_matrix_diag),
            cooks=floats(infl.cooks_distance[0]),
            press=float(np.sum(infl.resid_press ** 2)),
            durbin_watson=float(durbin_watson(res.resid)),
        ),
    )
    preds = []
    for x0 in new_points(cols):
        pr = res.get_prediction(np.array([[1.0] + x0]))
        frame = pr.summary_frame(alpha=ALPHA)
        preds.append(dict(x0=x0, mean=float(frame["mean"].iloc[0]), se_obs=float(pr.se_obs[0]),
                          obs_ci_lower=float(frame["obs_ci_lower"].iloc[0]),
                          obs_ci_upper=float(frame["obs_ci_upper"].iloc[0])))
    df = int(res.df_resid)
    out["prediction"] = dict(alpha=ALPHA, points=preds, df=df,
                             t_scipy=float(scipy.stats.t.ppf(1 - ALPHA / 2, df)),
                             t_mpmath=t_quantile_mp(ALPHA, df))

    if len(cols) == 1:
        ts = scipy.stats.theilslopes(y, cols[0], method="joint")
        out["theil_sen"] = dict(method="joint", slope=float(ts[0]), intercept=float(ts[1]))
    else:
        # VIF of the regressors only: the design given to statsmodels carries
        # the constant (column 0), as variance_inflation_factor expects.
        out["vif"] = [float(variance_inflation_factor(X, j)) for j in range(1, k)]
        reduced = sm.OLS(y, X[:, :k - 1]).fit()
        f, p, df = res.compare_f_test(reduced)
        out["partial_f"] = dict(drop="last regressor", F=float(f), p=float(p), df_diff=float(df))

    # Huber M-estimate; the IRLS of RLM (OLS start, MAD scale about 0
    # re-estimated after every weighted fit) run to its fixed point with a
    # tight coefficient tolerance instead of the default deviance criterion.
    tol = 1e-12 * float(np.max(np.abs(res.params)))
    rlm = sm.RLM(y, X, M=sm.robust.norms.HuberT(t=HUBER_T)).fit(
        scale_est="mad", conv="coefs", tol=tol, maxiter=HUBER_MAXITER)
    iterations = int(rlm.fit_history["iteration"])
    if iterations >= HUBER_MAXITER:
        raise SystemExit("%s: RLM did not converge in %d iterations" % (case["name"], HUBER_MAXITER))
    out["huber"] = dict(t=HUBER_T, scale_est="mad", conv="coefs", tol=tol, iterations=iterations,
                        params=floats(rlm.params), scale=float(rlm.scale))
    return out


def main():
    if len(sys.argv) != 2:
        raise SystemExit("usage: generate.py OUTPUT.json")
    doc = dict(
        generator="scripts/crosscheck/generate.py",
        versions=dict(python=sys.version.split()[0], numpy=np.__version__, scipy=scipy.__version__,
                      statsmodels=statsmodels.__version__, mpmath=mpmath.__version__),
        master_seed=MASTER_SEED,
        cases=[golden(c) for c in make_cases()],
    )
    with open(sys.argv[1], "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
