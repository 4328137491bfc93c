"""Per-fit statsmodels loop on the benchmark panel: the baseline costdrift's
analysis is measured against.

Reads the files bench-analyze wrote (-write DIR; layout in main.go) and, for
every object of the sample in meta.json, every candidate driver and every lag,
fits the straight line cost = a + b*x with

    res = sm.OLS(y, sm.add_constant(x)).fit()

and computes from it what costdrift's linear fit computes (fit.Line):
params, bse, tvalues, pvalues, rsquared, rsquared_adj, fvalue, f_pvalue,
resid, sqrt(scale) (residual standard error), the hat diagonal, Cook's
distance and PRESS (statsmodels OLSInfluence: hat_matrix_diag,
cooks_distance, ess_press = sum((e_i/(1-h_i))^2)), and AIC, AICc and BIC with
the error variance counted as a parameter (m = 3; statsmodels' own aic counts
m = 2, so they are formed here from res.llf).

The wall time of the loop is extrapolated linearly to all objects of the panel
(time per object x objects) and printed as

    RESULT side=statsmodels sample_objects=... fits=... wall_s=... extrapolated_s=...

After the timed loop it compares its numbers with costdrift's fits of the same
sample (ours_sample.f64) and prints the largest difference per quantity, so
the table is known to compare the same fits. cpu_s is the process's CPU time
in the loop (time.process_time), which other load disturbs less than wall_s.

Usage: /usr/bin/python3 statsmodels_loop.py DIR
"""

import json
import os
import sys
import time

import numpy as np
import statsmodels
import statsmodels.api as sm


def fit_one(y, x):
    """One straight-line fit and every quantity costdrift keeps of it."""
    res = sm.OLS(y, sm.add_constant(x, has_constant="add")).fit()
    infl = res.get_influence()
    n = res.nobs
    m = 3  # intercept, slope, error variance
    aic = -2 * res.llf + 2 * m
    aicc = aic + 2 * m * (m + 1) / (n - m - 1)
    bic = -2 * res.llf + np.log(n) * m
    hat = infl.hat_matrix_diag
    cooks = infl.cooks_distance[0]
    press = infl.ess_press
    return (
        res.params,
        res.bse,
        res.tvalues,
        res.pvalues,
        res.rsquared,
        res.rsquared_adj,
        res.fvalue,
        res.f_pvalue,
        res.resid,
        np.sqrt(res.scale),
        hat,
        cooks,
        press,
        aic,
        aicc,
        bic,
    )


def main():
    d = sys.argv[1]
    with open(os.path.join(d, "meta.json")) as f:
        meta = json.load(f)
    n_obj, T, L = meta["objects"], meta["periods"], meta["max_lag"]
    k = meta["drivers_per_object"]
    lags = meta["lags"]
    costs = np.fromfile(os.path.join(d, "costs.f64"), dtype="<f8").reshape(n_obj, T)
    drivers = np.fromfile(os.path.join(d, "drivers.f64"), dtype="<f8").reshape(meta["series"], T + L)
    cands = np.fromfile(os.path.join(d, "candidates.i32"), dtype="<i4").reshape(n_obj, k)
    sample = meta["sample"]
    fields = meta["our_fields"]

    fit_one(costs[0], drivers[cands[0, 0], L - lags[0] : L - lags[0] + T])  # import and cache warm-up, untimed

    mine = np.full((len(sample), k, len(lags), len(fields)), np.nan)
    fits = 0
    start, cpu_start = time.perf_counter(), time.process_time()
    for si, o in enumerate(sample):
        y = costs[o]
        for j in range(k):
            series = drivers[cands[o, j]]
            for li, lag in enumerate(lags):
                x = series[L - lag : L - lag + T]
                if np.ptp(x) == 0:
                    continue  # costdrift skips a constant driver too
                params, bse, t, p, r2, _, _, _, _, s, _, _, press, _, aicc, _ = fit_one(y, x)
                mine[si, j, li] = (params[0], params[1], bse[0], bse[1], t[1], p[1], r2, s, press, aicc)
                fits += 1
    wall = time.perf_counter() - start
    cpu = time.process_time() - cpu_start

    extrapolated = wall / len(sample) * n_obj
    extrapolated_cpu = cpu / len(sample) * n_obj
    print(
        f"RESULT side=statsmodels sample_objects={len(sample)} fits={fits} wall_s={wall:.4f} "
        f"cpu_s={cpu:.4f} per_fit_us={1e6 * wall / fits:.1f} objects={n_obj} extrapolated_s={extrapolated:.2f} "
        f"extrapolated_cpu_s={extrapolated_cpu:.2f} "
        f"fits_per_s={fits / wall:.0f} statsmodels={statsmodels.__version__} numpy={np.__version__}"
    )

    ours = np.fromfile(os.path.join(d, "ours_sample.f64"), dtype="<f8").reshape(mine.shape)
    print(agreement(ours, mine, fields, fits))


def agreement(ours, mine, fields, fits):
    """The largest difference per quantity between the two sides' fits, on a
    scale that suits it: intercept and slope in their own standard errors,
    t and R² absolute, the rest relative (p-values only where both are above
    1e-300, below which one side may underflow to 0)."""
    col = {name: i for i, name in enumerate(fields)}
    only_one = int(np.sum(np.isnan(ours[..., col["slope"]]) != np.isnan(mine[..., col["slope"]])))
    parts = []
    for name in fields:
        a, b = ours[..., col[name]], mine[..., col[name]]
        ok = ~np.isnan(a) & ~np.isnan(b)
        diff = np.abs(a - b)
        if name in ("intercept", "slope"):
            scale, how = mine[..., col[name + "_se"]], "se"
        elif name in ("slope_t", "r2"):
            scale, how = np.ones_like(b), "abs"
        else:
            scale, how = np.abs(b), "rel"
            if name == "slope_p":
                ok &= (np.abs(a) > 1e-300) & (np.abs(b) > 1e-300)
        parts.append(f"{name}={np.max(diff[ok] / scale[ok]):.1e}({how})")
    return (f"AGREE statsmodels vs ours over {fits} fits ({only_one} fitted by one side only), "
            "largest difference: " + " ".join(parts))

if __name__ == "__main__":
    main()
