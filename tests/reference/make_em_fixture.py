#!/usr/bin/env python3
"""Reference maximum-likelihood estimate for rows with empty cells
(tests/fixtures/em_iris_gaps.json).

    python3 tests/reference/make_em_fixture.py

The iris measurements shipped with scikit-learn (load_iris) with the cells
(i, j) where (7 i + 3 j) % 10 == 0 emptied (a pattern that is not
monotone). The observed-data log-likelihood, the sum over rows of
scipy.stats.multivariate_normal.logpdf of the observed sub-vector, is
maximized directly with scipy.optimize.minimize (BFGS, then a Nelder-Mead
polish) over the mean and the Cholesky factor of the
covariance (log-diagonal), independently of any EM iteration.
"""

import json
import os
import platform

import numpy as np
import scipy
import sklearn
from scipy import optimize, stats
from sklearn.datasets import load_iris

x = load_iris().data.astype(float)
n, p = x.shape
y = x.copy()
for i in range(n):
    for j in range(p):
        if (7 * i + 3 * j) % 10 == 0:
            y[i, j] = np.nan
assert not np.isnan(y).all(axis=1).any()
patterns = {}
for i in range(n):
    key = tuple(~np.isnan(y[i]))
    patterns.setdefault(key, []).append(i)
tril = np.tril_indices(p)


def unpack(theta):
    mu = theta[:p]
    l = np.zeros((p, p))
    l[tril] = theta[p:]
    l[np.diag_indices(p)] = np.exp(np.diag(l))
    return mu, l @ l.T


def negloglik(theta):
    mu, cov = unpack(theta)
    total = 0.0
    for key, rows in patterns.items():
        o = np.array(key)
        total += stats.multivariate_normal(mu[o], cov[np.ix_(o, o)]).logpdf(y[np.ix_(rows, o)]).sum()
    return -total


mu0 = np.nanmean(y, axis=0)
l0 = np.diag(np.log(np.nanstd(y, axis=0)))
theta0 = np.concatenate([mu0, l0[tril]])
res = optimize.minimize(negloglik, theta0, method="BFGS", options={"gtol": 1e-10, "maxiter": 10000})
# BFGS stops on rounding near the optimum; polish with Nelder-Mead.
res = optimize.minimize(negloglik, res.x, method="Nelder-Mead",
                        options={"xatol": 1e-12, "fatol": 1e-13, "maxiter": 200000, "maxfev": 200000})
grad = optimize.approx_fprime(res.x, negloglik, 1e-7)
mu, cov = unpack(res.x)
out = {
    "provenance": {
        "script": "tests/reference/make_em_fixture.py",
        "dataset": "iris (sklearn.datasets.load_iris), cells (i, j) with (7i + 3j) % 10 == 0 emptied",
        "method": "scipy.optimize.minimize BFGS on the observed-data log-likelihood (scipy.stats.multivariate_normal.logpdf)",
        "converged": bool(res.success),
        "message": str(res.message),
        "gradient_max_abs": float(np.abs(grad).max()),
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "scikit-learn": sklearn.__version__,
    },
    "data": [[None if np.isnan(v) else float(v) for v in r] for r in y],
    "mean": mu.tolist(),
    "covariance": cov.tolist(),
    "log_likelihood": -float(res.fun),
}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "..", "fixtures", "em_iris_gaps.json"), "w") as fh:
    json.dump(out, fh, indent=1)
    fh.write("\n")
print(res.success, res.message, -res.fun, int(np.isnan(y).sum()), np.abs(grad).max())
