#!/usr/bin/env python3
"""Stack loss data and a scikit-learn MCD run on it, for the robust reference tests.

    python3 tests/reference/make_stackloss_fixture.py

Writes tests/fixtures/stackloss.json:

  source     where the rows come from: Brownlee (1965), Statistical Theory and
             Methodology in Science and Engineering, 2nd ed., p. 454, as shipped
             by statsmodels (statsmodels.datasets.stackloss)
  columns    AIRFLOW, WATERTEMP, ACIDCONC (the three explanatory variables)
  data       21 rows
  sklearn    sklearn.covariance.MinCovDet(random_state=s) for s = 0..4 with its
             default subset size h = ceil((n + p + 1)/2) = 13: h, and for each
             seed the rows (1-based) whose squared distance under the
             reweighted estimate exceeds chi2(3).ppf(0.975), and the raw
             subset (1-based), the reweighted location and covariance, and
             ln det of the raw covariance (divisor h, before consistency)
"""

import json
import os
import platform

import numpy as np
import scipy
import sklearn
import statsmodels
from scipy.stats import chi2
from sklearn.covariance import MinCovDet
from statsmodels.datasets import stackloss

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "fixtures", "stackloss.json")

frame = stackloss.load_pandas().data
columns = ["AIRFLOW", "WATERTEMP", "ACIDCONC"]
x = frame[columns].to_numpy(dtype=float)
n, p = x.shape
cut = chi2.ppf(0.975, p)
runs = []
for seed in range(5):
    m = MinCovDet(random_state=seed).fit(x)
    d2 = m.mahalanobis(x)
    runs.append(
        {
            "seed": seed,
            "flagged_rows": [int(i) + 1 for i in np.flatnonzero(d2 > cut)],
            "raw_subset": [int(i) + 1 for i in np.flatnonzero(m.raw_support_)],
            "reweighted_rows": [int(i) + 1 for i in np.flatnonzero(m.support_)],
            "location": m.location_.tolist(),
            "covariance": m.covariance_.tolist(),
            "raw_log_determinant": float(np.linalg.slogdet(
                np.cov(x[m.raw_support_].T, bias=True))[1]),
        }
    )
out = {
    "generated_by": "tests/reference/make_stackloss_fixture.py",
    "versions": {
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "scikit-learn": sklearn.__version__,
        "statsmodels": statsmodels.__version__,
    },
    "source": "Brownlee (1965), Statistical Theory and Methodology in Science and Engineering, 2nd ed., p. 454; rows as shipped by statsmodels.datasets.stackloss",
    "columns": columns,
    "data": x.tolist(),
    "sklearn": {"subset_size": int(np.ceil(0.5 * (n + p + 1))), "runs": runs},
}
with open(OUT, "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
print(json.dumps(out["sklearn"], indent=1))
