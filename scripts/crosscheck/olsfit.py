"""What the crosscheck scripts record of a statsmodels OLS fit, and how they
write their golden files."""
import json
import math
import sys

import numpy as np
import scipy
import statsmodels
import statsmodels.api as sm


def floats(a):
    return [float(v) for v in np.asarray(a, dtype=float).ravel()]


def fitted(res, with_r2):
    out = dict(n=int(res.nobs), params=floats(res.params), bse=floats(res.bse), pvalues=floats(res.pvalues),
               residual_se=float(math.sqrt(res.scale)))
    if with_r2:
        out["r2"] = float(res.rsquared)
    return out


def models(y, x):
    """The constant, straight-line (a + b*x) and proportional (b*x) fits of y on x."""
    return dict(
        constant=fitted(sm.OLS(y, np.ones((len(y), 1))).fit(), False),
        linear=fitted(sm.OLS(y, sm.add_constant(x)).fit(), True),
        proportional=fitted(sm.OLS(y, np.asarray(x).reshape(-1, 1)).fit(), False),
    )


def write_golden(path, generator, seed, cases, **about):
    """Writes the cases with the generator, what else the caller says about
    them, the versions that computed them and the seed."""
    doc = dict(generator=generator, **about,
               versions=dict(python=sys.version.split()[0], numpy=np.__version__, scipy=scipy.__version__,
                             statsmodels=statsmodels.__version__),
               seed=seed, cases=cases)
    with open(path, "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")
