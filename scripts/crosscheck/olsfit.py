"""What the crosscheck scripts record of a statsmodels OLS fit."""
import math

import numpy as np


def floats(a):
    return [float(v) for v in np.asarray(a, dtype=float).ravel()]


def fitted(res, with_r2):
    out = dict(n=int(res.nobs), params=floats(res.params), bse=floats(res.bse), pvalues=floats(res.pvalues),
               residual_se=float(math.sqrt(res.scale)))
    if with_r2:
        out["r2"] = float(res.rsquared)
    return out
