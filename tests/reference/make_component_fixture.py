#!/usr/bin/env python3
"""Reference values for component-based monitoring (T^2 on k principal
components and the squared prediction error Q), on the Wisconsin breast
cancer data bundled with scikit-learn (569 x 30).

    python3 tests/reference/make_component_fixture.py

Writes tests/fixtures/component_monitoring.json. Phase I: the first 400 rows;
new rows: the remaining 169. Variables are centred at the Phase I mean and
divided by the Phase I standard deviation (ddof = 1); eigenvalues and vectors
of the Phase I correlation matrix come from numpy.linalg.eigh. Limits:

  Jackson and Mudholkar (1979), Technometrics 21, 341-349, eq. for Q_alpha:
    theta_i = sum_{j>k} lambda_j^i, h0 = 1 - 2 theta1 theta3 / (3 theta2^2),
    Q_a = theta1 * (z_a sqrt(2 theta2 h0^2)/theta1 + 1 + theta2 h0 (h0-1)/theta1^2)^(1/h0),
    z_a = scipy.stats.norm.isf(alpha);
  Box (1954): g = theta2/theta1, h = theta1^2/theta2, Q_a = g * chi2.isf(alpha, h);
  T^2 Phase II F limit in k dimensions: k (m-1)(m+1) / (m (m-k)) F_{k, m-k}(1-alpha);
  T^2 Phase I Beta limit: (m-1)^2/m * Beta_{k/2, (m-k-1)/2}(1-alpha).

T^2 and Q of the new rows are computed by explicit projection
(scores = C P, residual = C - scores P^T) in float64.
"""
import json, os, platform
import numpy as np, scipy, sklearn
from scipy import stats
from sklearn.datasets import load_breast_cancer

here = os.path.dirname(os.path.abspath(__file__))
x = load_breast_cancer().data.astype(np.float64)
m = 400
ref, new = x[:m], x[m:]
mu = ref.mean(axis=0)
sd = ref.std(axis=0, ddof=1)
c_ref = (ref - mu) / sd
corr = np.cov(c_ref, rowvar=False, ddof=1)
w, v = np.linalg.eigh(corr)
w, v = w[::-1], v[:, ::-1]
out = {
    "provenance": {
        "script": "tests/reference/make_component_fixture.py",
        "data": "sklearn.datasets.load_breast_cancer (569 x 30); rows 0..400 Phase I, 400..569 new",
        "numpy": np.__version__, "scipy": scipy.__version__, "sklearn": sklearn.__version__,
        "python": platform.python_version(),
    },
    "phase_one_rows": m,
    "data": x.tolist(),
    "eigenvalues": w.tolist(),
    "cases": [],
}
for k, alpha in [(5, 0.01), (10, 0.0027), (2, 0.05)]:
    rest = np.clip(w[k:], 0, None)
    t1, t2, t3 = (rest ** 1).sum(), (rest ** 2).sum(), (rest ** 3).sum()
    h0 = 1 - 2 * t1 * t3 / (3 * t2 ** 2)
    z = stats.norm.isf(alpha)
    jm = t1 * (z * np.sqrt(2 * t2 * h0 ** 2) / t1 + 1 + t2 * h0 * (h0 - 1) / t1 ** 2) ** (1 / h0)
    g, h = t2 / t1, t1 ** 2 / t2
    box = g * stats.chi2.isf(alpha, h)
    p = v[:, :k]
    cn = (new - mu) / sd
    scores = cn @ p
    t2new = (scores ** 2 / w[:k]).sum(axis=1)
    resid = cn - scores @ p.T
    qnew = (resid ** 2).sum(axis=1)
    f_limit = k * (m - 1) * (m + 1) / (m * (m - k)) * stats.f.isf(alpha, k, m - k)
    beta_limit = (m - 1) ** 2 / m * stats.beta.isf(alpha, k / 2, (m - k - 1) / 2)
    # p-values of the first ten new rows' Q under each law
    jm_p = stats.norm.sf(((qnew[:10] / t1) ** h0 - 1 - t2 * h0 * (h0 - 1) / t1 ** 2) * t1 / np.sqrt(2 * t2 * h0 ** 2))
    box_p = stats.chi2.sf(qnew[:10] / g, h)
    out["cases"].append({
        "components": k, "alpha": alpha,
        "theta": [t1, t2, t3], "h0": h0,
        "jackson_mudholkar_limit": jm, "box_g": g, "box_h": h, "box_limit": box,
        "t_squared_phase_two_limit": f_limit, "t_squared_phase_one_limit": beta_limit,
        "new_t_squared": t2new.tolist(), "new_residual": qnew.tolist(),
        "jackson_mudholkar_p_first10": jm_p.tolist(), "box_p_first10": box_p.tolist(),
    })
with open(os.path.join(here, "..", "fixtures", "component_monitoring.json"), "w") as f:
    json.dump(out, f)
print("wrote component_monitoring.json")
