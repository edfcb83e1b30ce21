"""Reference values for mvdist's Hotelling T² tests, Box's M and T² chart
limits, written to tests/fixtures/mean_tests.json.

    python3 tests/reference/make_mean_tests.py

Data: open datasets bundled inside the scikit-learn wheel (load_iris,
load_wine, load_breast_cancer); no network access. Every statistic is
computed here from its textbook formula with numpy (np.linalg.solve /
np.linalg.slogdet, float64) and scipy.stats (f, t, chi2 tails and
quantiles), independently of mvdist's Cholesky code. Welch's test comes
from scipy.stats.ttest_ind(equal_var=False).

Versions used are recorded in the file (numpy 2.4.6, scipy 1.17.1,
scikit-learn 1.9.1 when this was written).
"""

import json
import os
import platform

import numpy as np
import scipy
import scipy.stats as st
import sklearn
from sklearn.datasets import load_breast_cancer, load_iris, load_wine

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(os.path.dirname(HERE), "fixtures", "mean_tests.json")

VERSIONS = {
    "python": platform.python_version(),
    "numpy": np.__version__,
    "scipy": scipy.__version__,
    "scikit-learn": sklearn.__version__,
}


def intervals(est, se, t2_crit, bonf_dof, alpha):
    p = len(est)
    h = np.sqrt(t2_crit)
    out = []
    for j in range(p):
        t = st.t.isf(alpha / (2 * p), bonf_dof[j])
        out.append({
            "simultaneous": [float(est[j] - h * se[j]), float(est[j] + h * se[j])],
            "bonferroni": [float(est[j] - t * se[j]), float(est[j] + t * se[j])],
        })
    return out


def one_sample(x, mu0, alpha=0.05):
    n, p = x.shape
    xbar = x.mean(0)
    s = np.cov(x, rowvar=False, ddof=1).reshape(p, p)
    d = xbar - mu0
    t2 = n * d @ np.linalg.solve(s, d)
    c = p * (n - 1) / (n - p)
    f = t2 / c
    se = np.sqrt(np.diag(s) / n)
    return {
        "t2": float(t2), "f": float(f), "df1": p, "df2": n - p,
        "p_value": float(st.f.sf(f, p, n - p)),
        "estimate": xbar.tolist(),
        "intervals_alpha": alpha,
        "intervals": intervals(xbar, se, c * st.f.isf(alpha, p, n - p), [n - 1] * p, alpha),
    }


def two_sample(a, b, alpha=0.05):
    n1, p = a.shape
    n2 = b.shape[0]
    s1 = np.cov(a, rowvar=False, ddof=1).reshape(p, p)
    s2 = np.cov(b, rowvar=False, ddof=1).reshape(p, p)
    sp = ((n1 - 1) * s1 + (n2 - 1) * s2) / (n1 + n2 - 2)
    d = a.mean(0) - b.mean(0)
    t2 = n1 * n2 / (n1 + n2) * d @ np.linalg.solve(sp, d)
    df2 = n1 + n2 - p - 1
    c = p * (n1 + n2 - 2) / df2
    f = t2 / c
    se = np.sqrt((1 / n1 + 1 / n2) * np.diag(sp))
    return {
        "t2": float(t2), "f": float(f), "df1": p, "df2": df2,
        "p_value": float(st.f.sf(f, p, df2)),
        "estimate": d.tolist(),
        "intervals_alpha": alpha,
        "intervals": intervals(d, se, c * st.f.isf(alpha, p, df2), [n1 + n2 - 2] * p, alpha),
    }


def unequal_scatter(a, b, alpha=0.05):
    """Krishnamoorthy and Yu (2004), modified Nel-Van der Merwe test, from
    the paper's formulas with an explicit inverse (reference only)."""
    p = a.shape[1]
    vs, ns = [], []
    for x in (a, b):
        n = x.shape[0]
        vs.append(np.cov(x, rowvar=False, ddof=1).reshape(p, p) / n)
        ns.append(n)
    s = vs[0] + vs[1]
    sinv = np.linalg.inv(s)
    d = a.mean(0) - b.mean(0)
    t2 = d @ np.linalg.solve(s, d)
    den = sum((np.trace(v @ sinv @ v @ sinv) + np.trace(v @ sinv) ** 2) / (n - 1) for v, n in zip(vs, ns))
    nu = (p + p * p) / den
    df2 = nu - p + 1
    c = p * nu / df2
    f = t2 / c
    se = np.sqrt(np.diag(s))
    welch = [np.diag(s)[j] ** 2 / sum(v[j, j] ** 2 / (n - 1) for v, n in zip(vs, ns)) for j in range(p)]
    return {
        "t2": float(t2), "f": float(f), "df1": p, "df2": float(df2), "nu": float(nu),
        "p_value": float(st.f.sf(f, p, df2)),
        "estimate": d.tolist(),
        "intervals_alpha": alpha,
        "intervals": intervals(d, se, c * st.f.isf(alpha, p, df2), welch, alpha),
    }


def box_m(groups):
    g = len(groups)
    p = groups[0].shape[1]
    ns = [x.shape[0] for x in groups]
    covs = [np.cov(x, rowvar=False, ddof=1) for x in groups]
    nu = sum(ns) - g
    sp = sum((n - 1) * c for n, c in zip(ns, covs)) / nu
    m = nu * np.linalg.slogdet(sp)[1] - sum((n - 1) * np.linalg.slogdet(c)[1] for n, c in zip(ns, covs))
    c1 = (sum(1 / (n - 1) for n in ns) - 1 / nu) * (2 * p * p + 3 * p - 1) / (6 * (p + 1) * (g - 1))
    c2 = (sum(1 / (n - 1) ** 2 for n in ns) - 1 / nu ** 2) * (p - 1) * (p + 2) / (6 * (g - 1))
    df1 = p * (p + 1) * (g - 1) / 2
    chi = (1 - c1) * m
    df2 = (df1 + 2) / abs(c2 - c1 * c1)
    if c2 > c1 * c1:
        b = df1 / (1 - c1 - df1 / df2)
        f = m / b
    else:
        b = df2 / (1 - c1 + 2 / df2)
        f = df2 * m / (df1 * (b - m))
    return {
        "m": float(m), "chi2": float(chi), "chi2_dof": df1, "chi2_p": float(st.chi2.sf(chi, df1)),
        "f": float(f), "f_df1": df1, "f_df2": float(df2), "f_p": float(st.f.sf(f, df1, df2)),
    }


def main():
    iris = load_iris()
    x, y = iris.data, iris.target
    setosa, versicolor, virginica = (x[y == k] for k in range(3))
    wine = load_wine()
    w, wy = wine.data, wine.target
    wine_cols = [0, 1, 2, 5, 6]  # alcohol, malic_acid, ash, total_phenols, flavanoids
    wc = [w[wy == k][:, wine_cols] for k in range(3)]
    bc = load_breast_cancer().data[:40]
    # Paired: the same tumours' "mean" and "worst" radius, texture, smoothness.
    first, second = bc[:, [0, 1, 4]], bc[:, [20, 21, 24]]

    welch_a, welch_b = wc[0][:, 1:2], wc[2][:, 1:2]
    wt = st.ttest_ind(welch_a[:, 0], welch_b[:, 0], equal_var=False)

    cases = {
        "iris_setosa_one_sample": {
            "description": "iris setosa (50 x 4) against target (5.0, 3.4, 1.5, 0.25)",
            "data": setosa.tolist(), "target": [5.0, 3.4, 1.5, 0.25],
            **one_sample(setosa, np.array([5.0, 3.4, 1.5, 0.25])),
        },
        "wine_cultivar0_one_sample": {
            "description": "wine cultivar 0 (59 rows), columns alcohol, malic_acid, ash, total_phenols, flavanoids, against (13.7, 2.0, 2.45, 2.85, 2.95)",
            "data": wc[0].tolist(), "target": [13.7, 2.0, 2.45, 2.85, 2.95],
            **one_sample(wc[0], np.array([13.7, 2.0, 2.45, 2.85, 2.95])),
        },
        "iris_versicolor_vs_virginica_pooled": {
            "description": "iris versicolor vs virginica, pooled scatter",
            "a": versicolor.tolist(), "b": virginica.tolist(),
            **two_sample(versicolor, virginica),
        },
        "wine_0_vs_1_pooled": {
            "description": "wine cultivars 0 (59) vs 1 (71), five columns, pooled scatter",
            "a": wc[0].tolist(), "b": wc[1].tolist(),
            **two_sample(wc[0], wc[1]),
        },
        "wine_1_vs_2_unequal": {
            "description": "wine cultivars 1 (71) vs 2 (48), five columns, Krishnamoorthy-Yu",
            "a": wc[1].tolist(), "b": wc[2].tolist(),
            **unequal_scatter(wc[1], wc[2]),
        },
        "iris_setosa_first30_vs_versicolor_unequal": {
            "description": "iris setosa rows 0-29 vs versicolor (50), Krishnamoorthy-Yu",
            "a": setosa[:30].tolist(), "b": versicolor.tolist(),
            **unequal_scatter(setosa[:30], versicolor),
        },
        "breast_cancer_paired": {
            "description": "breast cancer rows 0-39: mean vs worst radius, texture, smoothness (paired)",
            "a": first.tolist(), "b": second.tolist(),
            **one_sample(first - second, np.zeros(3)),
        },
    }
    welch = {
        "description": "wine malic_acid, cultivar 0 vs 2: scipy.stats.ttest_ind(equal_var=False)",
        "a": welch_a.tolist(), "b": welch_b.tolist(),
        "t": float(wt.statistic), "p_value": float(wt.pvalue), "df": float(wt.df),
    }
    boxm = {
        "iris_species": {"description": "iris, 3 species x 50, 4 variables",
                         **box_m([setosa, versicolor, virginica])},
        "wine_cultivars": {"description": "wine, 3 cultivars, five columns",
                           **box_m(wc)},
    }
    # Subgroup chart limits (NIST/SEMATECH e-Handbook 6.5.4.3, from Alt 1985):
    subgroup_limits = []
    for m in [10, 20, 25, 50]:
        for n in [2, 3, 5]:
            for p in [2, 3, 5]:
                dfd = m * n - m - p + 1
                if dfd < 1:
                    continue
                for alpha in [0.05, 0.01, 0.0027]:
                    fq = st.f.isf(alpha, p, dfd)
                    subgroup_limits.append({
                        "m": m, "n": n, "p": p, "alpha": alpha,
                        "phase1_ucl": float(p * (m - 1) * (n - 1) / dfd * fq),
                        "phase2_ucl": float(p * (m + 1) * (n - 1) / dfd * fq),
                    })
    obj = {
        "provenance": {
            "script": "tests/reference/make_mean_tests.py",
            "versions": VERSIONS,
            "source": "sklearn.datasets load_iris, load_wine, load_breast_cancer (bundled, open data)",
            "method": (
                "T2 by np.linalg.solve; F transforms and p-values by scipy.stats.f.sf; simultaneous "
                "intervals est +- sqrt(c F.isf(alpha; p, df2)) se and Bonferroni est +- t.isf(alpha/(2p); dof) se "
                "(Johnson & Wichern ch. 5-6); unequal-scatter test from Krishnamoorthy & Yu (2004) formulas "
                "with np.linalg.inv, per-variable Welch dof for its Bonferroni intervals; Box's M with "
                "np.linalg.slogdet and the chi2/F approximations of Box (1949) as given by Rencher (2002) 7.3.2; "
                "subgroup T2 chart limits p(m-+1)(n-1)/(mn-m-p+1) F.isf(alpha; p, mn-m-p+1) (NIST 6.5.4.3)."
            ),
        },
        "cases": cases,
        "welch": welch,
        "box_m": boxm,
        "subgroup_limits": subgroup_limits,
    }
    with open(OUT, "w") as fh:
        json.dump(obj, fh, allow_nan=False, separators=(",", ":"))
        fh.write("\n")
    for k, v in cases.items():
        print(k, v["t2"], v["p_value"])
    for k, v in boxm.items():
        print(k, v)
    print("welch", welch["t"], welch["p_value"], welch["df"])


if __name__ == "__main__":
    main()
