"""Vectorised closed-form screen of every simple regression on the benchmark
panel: the practical floor for costdrift's analysis.

Reads the files bench-analyze wrote (-write DIR; layout in main.go) and
computes, for all objects x candidate drivers x lags at once with numpy array
operations (in chunks of CHUNK objects to keep the arrays in cache), the
straight line cost = a + b*x by the closed form

    Sxx = sum (x - xbar)^2,  Sxy = sum (x - xbar)(y - ybar),  Syy = sum (y - ybar)^2
    b = Sxy / Sxx,  a = ybar - b*xbar,  RSS = Syy - b*Sxy,  R2 = 1 - RSS/Syy
    t = b / sqrt(RSS / ((n - 2) * Sxx))

("basic": slope, intercept, R2, t of the slope, as asked for the floor), and
again with the two-sided p-value of the slope (scipy.special.stdtr) and PRESS
= sum (e_i / (1 - h_i))^2 with h_i = 1/n + (x_i - xbar)^2 / Sxx ("with p and
PRESS": what costdrift needs to correct and rank the candidates). The driver
means and centred values are computed once per series and lag and gathered
per object, since every object of a cost centre shares them. Best of REPEATS
runs of each (wall and process CPU time); prints

    RESULT side=numpy variant=basic objects=... fits=... wall_s=...
    RESULT side=numpy variant=p_press ...

and then checks slope, R2, t, p and PRESS against costdrift's fits of the
sample (ours_sample.f64).

Usage: /usr/bin/python3 numpy_floor.py DIR
"""

import json
import os
import sys
import time

import numpy as np
from scipy.special import stdtr

CHUNK = 500
REPEATS = 1


def screen(costs, drivers, cands, lags, L, with_p_press):
    n_obj, T = costs.shape
    nl = len(lags)
    # Per series and lag: the window of driver values paired with the costs.
    xs = np.stack([drivers[:, L - lag : L - lag + T] for lag in lags], axis=1)  # (series, lags, T)
    xbar = xs.mean(axis=2)
    xc = xs - xbar[..., None]
    sxx = np.einsum("slt,slt->sl", xc, xc)
    k = cands.shape[1]
    out = {name: np.empty((n_obj, k, nl)) for name in ("intercept", "slope", "r2", "slope_t", "slope_p", "press")}
    df = T - 2
    for lo in range(0, n_obj, CHUNK):
        hi = min(lo + CHUNK, n_obj)
        idx = cands[lo:hi]
        y = costs[lo:hi]
        ybar = y.mean(axis=1)
        yc = y - ybar[:, None]
        syy = np.einsum("ot,ot->o", yc, yc)
        xcg = xc[idx]  # (objects, k, lags, T)
        sxxg = sxx[idx]
        # Batched matrix-vector products: (k·lags × T) · (T) per object.
        sxy = np.matmul(xcg.reshape(hi - lo, k * nl, T), yc[:, :, None]).reshape(hi - lo, k, nl)
        b = sxy / sxxg
        rss = np.maximum(syy[:, None, None] - b * sxy, 0)
        out["slope"][lo:hi] = b
        out["intercept"][lo:hi] = ybar[:, None, None] - b * xbar[idx]
        out["r2"][lo:hi] = 1 - rss / syy[:, None, None]
        t = b / np.sqrt(rss / (df * sxxg))
        out["slope_t"][lo:hi] = t
        if with_p_press:
            out["slope_p"][lo:hi] = 2 * stdtr(df, -np.abs(t))
            e = yc[:, None, None, :] - b[..., None] * xcg
            h = 1 / T + xcg * xcg / sxxg[..., None]
            loo = e / (1 - h)
            out["press"][lo:hi] = np.einsum("oklt,oklt->okl", loo, loo)
    return out


def main():
    d = sys.argv[1]
    with open(os.path.join(d, "meta.json")) as f:
        meta = json.load(f)
    n_obj, T, L = meta["objects"], meta["periods"], meta["max_lag"]
    k = meta["drivers_per_object"]
    lags = meta["lags"]
    costs = np.fromfile(os.path.join(d, "costs.f64"), dtype="<f8").reshape(n_obj, T)
    drivers = np.fromfile(os.path.join(d, "drivers.f64"), dtype="<f8").reshape(meta["series"], T + L)
    cands = np.fromfile(os.path.join(d, "candidates.i32"), dtype="<i4").reshape(n_obj, k).astype(np.intp)
    fits = n_obj * k * len(lags)

    screen(costs[:CHUNK], drivers, cands[:CHUNK], lags, L, True)  # warm-up, untimed
    results = {}
    for variant, full in (("basic", False), ("p_press", True)):
        best, best_cpu = float("inf"), float("inf")
        for _ in range(REPEATS):
            start, cpu_start = time.perf_counter(), time.process_time()
            out = screen(costs, drivers, cands, lags, L, full)
            best = min(best, time.perf_counter() - start)
            best_cpu = min(best_cpu, time.process_time() - cpu_start)
        results[variant] = out
        print(
            f"RESULT side=numpy variant={variant} objects={n_obj} fits={fits} wall_s={best:.4f} cpu_s={best_cpu:.4f} "
            f"objects_per_s={n_obj / best:.0f} fits_per_s={fits / best:.0f} chunk={CHUNK}"
        )

    out = results["p_press"]
    sample = meta["sample"]
    fields = meta["our_fields"]
    ours = np.fromfile(os.path.join(d, "ours_sample.f64"), dtype="<f8").reshape(len(sample), k, len(lags), len(fields))
    col = {name: i for i, name in enumerate(fields)}
    parts = []
    for name in ("slope", "r2", "slope_t", "slope_p", "press"):
        a = ours[..., col[name]]
        b = out[name][sample]
        ok = ~np.isnan(a)
        diff = np.abs(a - b)
        if name == "slope":
            scale, how = ours[..., col["slope_se"]], "se"
        elif name in ("r2", "slope_t"):
            scale, how = np.ones_like(a), "abs"
        else:
            scale, how = np.abs(a), "rel"
            if name == "slope_p":
                ok &= (np.abs(a) > 1e-300) & (np.abs(b) > 1e-300)
        parts.append(f"{name}={np.max(diff[ok] / scale[ok]):.1e}({how})")
    print(f"AGREE numpy vs ours over the sample's {int(np.sum(~np.isnan(ours[..., 0])))} fits, largest difference: " + " ".join(parts))


if __name__ == "__main__":
    main()
