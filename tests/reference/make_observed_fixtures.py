#!/usr/bin/env python3
"""Reference values for rows with empty cells (tests/fixtures/observed_distances.json).

    python3 tests/reference/make_observed_fixtures.py

On the iris measurements shipped with scikit-learn (load_iris), the mean and
the unbiased covariance of all 150 rows are computed with numpy; then, for a
few rows with chosen cells emptied, the squared distance on the observed
coordinates, (x_o - mu_o)^T S_oo^{-1} (x_o - mu_o), with numpy.linalg.solve
on the sub-matrix, and its F p-value for a new row with p_o variables,
scipy.stats.f.sf(n (n - p_o) d2 / (p_o (n + 1) (n - 1)), p_o, n - p_o).
"""

import json
import os
import platform

import numpy as np
import scipy
import sklearn
from scipy import stats
from sklearn.datasets import load_iris

x = load_iris().data.astype(float)
n, p = x.shape
mu = x.mean(axis=0)
s = np.cov(x, rowvar=False, ddof=1)
cases = []
for row, empty in [(0, [1]), (17, [0, 3]), (41, [2]), (106, [1, 2, 3]), (131, [])]:
    v = x[row].copy()
    v[empty] = np.nan
    o = [j for j in range(p) if j not in empty]
    c = v[o] - mu[o]
    d2 = float(c @ np.linalg.solve(s[np.ix_(o, o)], c))
    k = len(o)
    f = n * (n - k) * d2 / (k * (n + 1) * (n - 1))
    cases.append({
        "row": row,
        "values": [None if np.isnan(t) else float(t) for t in v],
        "observed": o,
        "squared_distance": d2,
        "p_value_new": float(stats.f.sf(f, k, n - k)),
    })
out = {
    "provenance": {
        "script": "tests/reference/make_observed_fixtures.py",
        "dataset": "iris (sklearn.datasets.load_iris)",
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "scikit-learn": sklearn.__version__,
    },
    "n": n,
    "p": p,
    "data": x.tolist(),
    "cases": cases,
}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "..", "fixtures", "observed_distances.json"), "w") as fh:
    json.dump(out, fh, indent=1)
    fh.write("\n")
