#!/usr/bin/python3
"""Reference values for test/summarize/local-likelihood*.test.ts, computed with
general-purpose libraries (statsmodels GLM, SciPy, NumPy) from the points in
local-likelihood-points.json. Not run by CI; run by hand with Debian's Python
(which has python3-statsmodels and python3-scipy):

    /usr/bin/python3 test/reference/local-likelihood-reference.py values
    /usr/bin/python3 test/reference/local-likelihood-reference.py points   # regenerates the points file

and copy the printed values into the tests. The estimate it computes is the
one docs/smoothing.md describes; every fit is a statsmodels GLM (Binomial,
logit link) on the points within reach, the kernel weights given as
freq_weights, and the sandwich variance J^-1 K J^-1 is built from the
statsmodels Hessians of the same model with weights w and w^2.
"""
import json
import math
import os
import sys
import warnings

import numpy as np
import scipy
import statsmodels
import statsmodels.api as sm
from scipy.stats import binom, norm
from statsmodels.stats.proportion import proportion_confint
from statsmodels.tools.sm_exceptions import PerfectSeparationError

HERE = os.path.dirname(os.path.abspath(__file__))
POINTS = os.path.join(HERE, "local-likelihood-points.json")

REACH = 4.0  # kernel cut off at 4 bandwidths
MIN_EFFECTIVE_POINTS = 2.0
MIN_EFFECTIVE_POINTS_LINEAR = 6.0
MAX_ABS_LOGIT = 10.0
GRID = [10 ** (-(17 - i) / 10) for i in range(18)]
Z = norm.ppf(0.975)


def expit(t):
    return 1.0 / (1.0 + math.exp(-t))


def make_points():
    rng = np.random.default_rng(20240611)
    smooth = []
    for _ in range(60):
        x, y = float(rng.uniform()), float(rng.uniform())
        n = int(rng.integers(2, 6))
        p = expit(5.0 * (y - 0.3 - 0.4 * x))
        smooth.append({"x": round(x, 6), "y": round(y, 6), "trials": n, "successes": int(rng.binomial(n, p))})
    # Two more replicates of the first location, listed separately: they are pooled with it.
    for _ in range(2):
        p = expit(5.0 * (smooth[0]["y"] - 0.3 - 0.4 * smooth[0]["x"]))
        smooth.append({"x": smooth[0]["x"], "y": smooth[0]["y"], "trials": 2, "successes": int(rng.binomial(2, p))})
    split = []
    for _ in range(30):
        x, y = float(rng.uniform()), float(rng.uniform())
        n = int(rng.integers(2, 5))
        split.append({"x": round(x, 6), "y": round(y, 6), "trials": n, "successes": n if x < 0.5 else 0})
    steep = []
    for _ in range(40):
        x, y = float(rng.uniform()), float(rng.uniform())
        p = expit(30.0 * (y - 0.5))
        steep.append({"x": round(x, 6), "y": round(y, 6), "trials": 3, "successes": int(rng.binomial(3, p))})
    return {"smooth": smooth, "split": split, "steep": steep}


def pooled(points):
    by = {}
    for p in points:
        if p["trials"] == 0:
            continue
        key = (p["x"], p["y"])
        if key in by:
            by[key][2] += p["trials"]
            by[key][3] += p["successes"]
        else:
            by[key] = [p["x"], p["y"], p["trials"], p["successes"]]
    a = np.array(list(by.values()), dtype=float)
    return a[:, 0], a[:, 1], a[:, 2], a[:, 3]


def wilson(p, n):
    # statsmodels' Wilson interval with a real "number of trials" (Kish's effective trials).
    lo, hi = proportion_confint(p * n, n, alpha=0.05, method="wilson")
    return (0.0 if p == 0 else float(lo)), (1.0 if p == 1 else float(hi))


def fit(data, h, qx, qy, exclude=-1):
    x, y, n, k = data
    r2 = (x - qx) ** 2 + (y - qy) ** 2
    keep = r2 <= (REACH * h) ** 2
    if exclude >= 0:
        keep[exclude] = False
    if not keep.any():
        return {"ok": False, "reason": "none in reach"}
    w = np.exp(-r2[keep] / (2 * h * h))
    xs, ys, ns, ks = x[keep], y[keep], n[keep], k[keep]
    eff_points = w.sum() ** 2 / (w ** 2).sum()
    if eff_points < MIN_EFFECTIVE_POINTS:
        return {"ok": False, "reason": "few effective points", "effectivePoints": eff_points}

    def constant(cause):
        p = float((w * ks).sum() / (w * ns).sum())
        n_eff = float((w * ns).sum() ** 2 / (w * w * ns).sum())
        lo, hi = wilson(p, n_eff)
        interior = 0 < p < 1
        # logit and its SE from statsmodels' intercept-only GLM with the same weights.
        logit = se = None
        if interior:
            endog = np.column_stack([ks, ns - ks])
            ones = np.ones((len(w), 1))
            res = sm.GLM(endog, ones, family=sm.families.Binomial(), freq_weights=w).fit(tol=1e-14, maxiter=200)
            j = -sm.GLM(endog, ones, family=sm.families.Binomial(), freq_weights=w).hessian(res.params, observed=False)
            kk = -sm.GLM(endog, ones, family=sm.families.Binomial(), freq_weights=w * w).hessian(
                res.params, observed=False
            )
            logit = float(res.params[0])
            se = float(math.sqrt(kk[0, 0] / j[0, 0] ** 2))
        return {"ok": True, "method": "local-constant", "fallback": cause, "p": p, "lo": lo, "hi": hi,
                "logit": logit, "seLogit": se, "effectivePoints": float(eff_points), "effectiveTrials": n_eff}

    if eff_points < MIN_EFFECTIVE_POINTS_LINEAR:
        return constant("few-effective-points")
    if ks.sum() == 0 or ks.sum() == ns.sum():
        return constant("one-outcome-nearby")
    X = np.column_stack([np.ones(len(w)), (xs - qx) / h, (ys - qy) / h])
    if np.linalg.matrix_rank(X * np.sqrt(w * ns)[:, None], tol=1e-8) < 3:
        return constant("collinear-points")
    endog = np.column_stack([ks, ns - ks])
    model = sm.GLM(endog, X, family=sm.families.Binomial(), freq_weights=w)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            res = model.fit(tol=1e-14, maxiter=200)
    except (PerfectSeparationError, Warning, np.linalg.LinAlgError) as e:
        out = constant("separation")
        out["statsmodels"] = type(e).__name__
        return out
    if not res.converged or abs(res.params[0]) > MAX_ABS_LOGIT:
        out = constant("separation")
        out["statsmodels"] = "not converged" if not res.converged else "|b0| > 10"
        return out
    b = res.params
    j = -model.hessian(b, observed=False)
    kk = -sm.GLM(endog, X, family=sm.families.Binomial(), freq_weights=w * w).hessian(b, observed=False)
    jinv = np.linalg.inv(j)
    cov = jinv @ kk @ jinv
    se = float(math.sqrt(cov[0, 0]))
    b0 = float(b[0])
    return {"ok": True, "method": "local-linear", "fallback": None, "p": expit(b0), "lo": expit(b0 - Z * se),
            "hi": expit(b0 + Z * se), "logit": b0, "seLogit": se, "effectivePoints": float(eff_points),
            "effectiveTrials": float((w * ns).sum() ** 2 / (w * w * ns).sum())}


def loo(data, h):
    x, y, n, k = data
    total = 0.0
    linear = 0
    for i in range(len(x)):
        f = fit(data, h, x[i], y[i], exclude=i)
        if not f["ok"]:
            return {"bandwidth": h, "logLikelihood": None, "localLinear": linear}
        linear += f["method"] == "local-linear"
        term = float(binom.logpmf(k[i], n[i], f["p"]))
        if not math.isfinite(term):
            return {"bandwidth": h, "logLikelihood": None, "localLinear": linear}
        total += term
    return {"bandwidth": h, "logLikelihood": total, "localLinear": linear}


STEEP_QUERIES = [(0.5, 0.5), (0.5, 0.97), (0.5, 0.03), (0.3, 0.6), (0.7, 0.42)]
QUERIES = [(0.5, 0.5), (0.1, 0.2), (0.9, 0.8), (0.3, 0.45), (0.75, 0.5), (0.02, 0.97), (0.98, 0.03), (0.6, 0.3)]


def values():
    pts = json.load(open(POINTS))
    smooth = pooled(pts["smooth"])
    split = pooled(pts["split"])
    steep = pooled(pts["steep"])
    out = {
        "source": f"statsmodels {statsmodels.__version__}, SciPy {scipy.__version__}, NumPy {np.__version__}",
        "grid": GRID,
        "smoothAt025": [dict(q=q, **fit(smooth, 0.25, *q)) for q in QUERIES],
        "smoothAt008": [dict(q=q, **fit(smooth, 0.08, *q)) for q in QUERIES],
        "splitAt015": [dict(q=q, **fit(split, 0.15, *q)) for q in QUERIES],
        "steepAt03": [dict(q=q, **fit(steep, 0.3, *q)) for q in STEEP_QUERIES],
        "curve": [loo(smooth, h) for h in GRID],
    }
    # With a huge bandwidth every weight is 1 to within 1e-12: the estimate is
    # plain logistic regression on the raw coordinates, and its standard error
    # the usual one of the linear predictor at the query point.
    x, y, n, k = smooth
    X = sm.add_constant(np.column_stack([x, y]))
    res = sm.GLM(np.column_stack([k, n - k]), X, family=sm.families.Binomial()).fit(tol=1e-14, maxiter=200)
    glob = []
    for q in QUERIES:
        row = np.array([1.0, q[0], q[1]])
        eta = float(row @ res.params)
        glob.append({"q": q, "logit": eta, "seLogit": float(math.sqrt(row @ res.cov_params() @ row)), "p": expit(eta)})
    out["global"] = glob
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    if sys.argv[1:] == ["points"]:
        with open(POINTS, "w") as f:
            json.dump(make_points(), f, indent=2)
            f.write("\n")
    elif sys.argv[1:] == ["values"]:
        values()
    else:
        sys.exit(__doc__)
