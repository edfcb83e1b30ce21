#!/usr/bin/env python3
"""Reference values for mvdist's normality tests (src/normality/).

Run from anywhere (paths are resolved relative to this file):

    python3 tests/reference/make_normality_fixtures.py

Needs numpy, scipy and scikit-learn (written with numpy 2.4.6, scipy 1.17.1,
scikit-learn 1.9.1; the versions used are recorded in every file).

Writes into tests/fixtures/:

  shapiro_wilk.json          Shapiro-Wilk W and p-value from scipy.stats.shapiro
                             for n = 3 ... 5000, plus standard normal quantiles
                             and tails from scipy.special
  normality_reference.json   Mardia, Henze-Zirkler, Royston, Doornik-Hansen,
                             per-variable moments and chi-square Q-Q coordinates,
                             each computed here in numpy directly from the
                             published formulas (the n x n matrices are formed
                             explicitly, unlike in mvdist)

Every data value comes from a dataset bundled inside the scikit-learn wheel
(load_iris, load_wine, load_diabetes, load_breast_cancer, load_digits; no
network access). Where a fixture is derived (a log, a z-score, a
concatenation, pixel sums), the derivation is written next to it.

The formulas (the papers are cited in src/normality/):
  Mardia (1970, 1974): b1p = n^-2 sum_ij g_ij^3, b2p = n^-1 sum_i g_ii^2 with
    g_ij = (x_i - xbar)' S^-1 (x_j - xbar), S the covariance with divisor n;
    n b1p / 6 ~ chi2(p(p+1)(p+2)/6); small-sample factor
    k = (p+1)(n+1)(n+3) / (n((n+1)(p+1) - 6)); kurtosis standardized with the
    exact null mean p(p+2)(n-1)/(n+1) and variance
    8p(p+2)(n-3)(n-p-1)(n-p+1) / ((n+1)^2 (n+3)(n+5)) (Mardia 1974).
  Henze-Zirkler (1990): T = n^-1 sum_ij exp(-b^2/2 D_ij)
    - 2 (1+b^2)^(-p/2) sum_i exp(-b^2/(2(1+b^2)) D_i) + n (1+2b^2)^(-p/2),
    b = 2^-1/2 (n(2p+1)/4)^(1/(p+4)), log-normal p-value from the null mean
    and variance of T.
  Royston (1983, 1992): R_j = Phi^-1(P_j / 2)^2 from the Shapiro-Wilk p-value
    P_j of each variable; e = p / (1 + (p-1) cbar), cbar the mean of
    c_ij = |r_ij|^5 (1 - (mu/nu)(1 - |r_ij|)^mu), mu = 0.715 (magnitudes: the
    statistic cannot depend on the sign of a variable, as no Shapiro-Wilk
    result does),
    nu = 0.21364 + 0.015124 ln(n)^2 - 0.0018034 ln(n)^3; H = e sum R_j / p
    ~ chi2(e).
  Doornik-Hansen (2008): transform with C^-1/2 V, C the correlation matrix,
    D'Agostino's transform of each skewness and the Wilson-Hilferty-type
    transform of each kurtosis; E = z1'z1 + z2'z2 ~ chi2(2p).
"""

import os
import sys

import mpmath
import numpy as np
import scipy.special as sp
import scipy.stats as st
from sklearn.datasets import (load_breast_cancer, load_diabetes, load_digits,
                              load_iris, load_wine)

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
# The shared writer (exact float round-trip check) and version record.
from make_fixtures import OUT, VERSIONS, write  # noqa: E402

SCRIPT = "tests/reference/make_normality_fixtures.py"


def floats(a):
    return np.asarray(a, dtype=np.float64).tolist()


# ---------------------------------------------------------------------------
# Shapiro-Wilk fixtures: scipy.stats.shapiro on bundled data
# ---------------------------------------------------------------------------
def shapiro_cases():
    bc = load_breast_cancer()
    wine = load_wine()
    iris = load_iris()
    diab = load_diabetes()
    digits = load_digits().data.reshape(-1, 8, 8)
    B = bc.data
    cases = []

    def add(name, source, x):
        x = np.asarray(x, dtype=np.float64)
        r = st.shapiro(x)
        case = {
            "name": name,
            "source": source,
            "n": int(len(x)),
            "data": floats(x),
            "w": float(r.statistic),
            "p_value": float(r.pvalue),
        }
        if len(x) == 3:
            # n = 3 is exact (a = (-sqrt(1/2), 0, sqrt(1/2))): evaluate it in
            # 50-digit mpmath from the float64 data, P = 1 - (6/pi) asin sqrt(1 - W).
            with mpmath.workdps(50):
                v = sorted(mpmath.mpf(float(t)) for t in x)
                m = sum(v) / 3
                ss = sum((t - m) ** 2 for t in v)
                w = (v[2] - v[0]) ** 2 / 2 / ss
                case["exact_w"] = float(w)
                case["exact_p_value"] = float(1 - 6 / mpmath.pi * mpmath.asin(mpmath.sqrt(1 - w)))
        cases.append(case)

    add("iris_sepal_length_3", "load_iris().data[:3, 0]", iris.data[:3, 0])
    add("wine_alcohol_3", "load_wine().data[:3, 0] (alcohol)", wine.data[:3, 0])
    add("breast_cancer_texture_3", "load_breast_cancer().data[:3, 1] (mean texture)", B[:3, 1])
    add("breast_cancer_radius_4", "load_breast_cancer().data[:4, 0] (mean radius)", B[:4, 0])
    add("wine_malic_acid_4", "load_wine().data[:4, 1] (malic acid)", wine.data[:4, 1])
    add("iris_petal_width_5", "load_iris().data[50:55, 3] (versicolor petal width)", iris.data[50:55, 3])
    add("diabetes_target_5", "load_diabetes().target[:5]", diab.target[:5])
    add("breast_cancer_smoothness_11", "load_breast_cancer().data[:11, 4] (mean smoothness)", B[:11, 4])
    add("wine_ash_11", "load_wine().data[:11, 2] (ash)", wine.data[:11, 2])
    add("diabetes_bmi_12", "load_diabetes().data[:12, 2] (bmi, as shipped: centred and scaled)", diab.data[:12, 2])
    add("iris_sepal_width_12", "load_iris().data[:12, 1]", iris.data[:12, 1])
    add("wine_color_intensity_20", "load_wine().data[:20, 9] (color intensity)", wine.data[:20, 9])
    add("iris_setosa_sepal_length_50", "load_iris().data[:50, 0] (setosa)", iris.data[:50, 0])
    add("breast_cancer_texture_100", "load_breast_cancer().data[:100, 1]", B[:100, 1])
    add("diabetes_target_442", "load_diabetes().target (all 442)", diab.target)
    add("breast_cancer_area_569", "load_breast_cancer().data[:, 3] (mean area, strongly skewed)", B[:, 3])
    quarters = np.concatenate([
        digits[:, :4, :4].sum(axis=(1, 2)), digits[:, :4, 4:].sum(axis=(1, 2)),
        digits[:, 4:, :4].sum(axis=(1, 2)), digits[:, 4:, 4:].sum(axis=(1, 2))])
    add("digits_quarter_ink_1000",
        "load_digits(): for each 8x8 image the pixel sum of each 4x4 quarter; the 1797 "
        "top-left sums, then top-right, bottom-left, bottom-right concatenated; first 1000 "
        "(integer values with many ties)", quarters[:1000])
    add("breast_cancer_mean_then_worst_texture_1000",
        "np.concatenate([load_breast_cancer().data[:, 1], load_breast_cancer().data[:, 21]])[:1000] "
        "(mean texture then worst texture)", np.concatenate([B[:, 1], B[:, 21]])[:1000])
    good = [1, 4, 5, 8, 11, 15, 21, 24, 25]
    zlog = np.concatenate([st.zscore(np.log(B[:, j])) for j in good])
    add("breast_cancer_zscored_log_columns_5000",
        "load_breast_cancer().data columns %s: for each column np.log then scipy.stats.zscore "
        "(ddof=0), concatenated in that order, first 5000 values" % good, zlog[:5000])
    add("digits_row_ink_5000",
        "load_digits(): pixel sum of each image row (8 per image, image by image), first 5000",
        digits.sum(axis=2).ravel()[:5000])
    return cases


def normal_cases():
    ps = [1e-300, 1e-100, 1e-20, 1e-10, 1e-5, 0.001, 0.01, 0.025, 0.1, 0.2, 0.3, 0.375 / 10.25,
          0.4, 0.45, 0.49, 0.5, 0.51, 0.7, 0.9, 0.99, 0.999999]
    zs = [-38.0, -20.0, -8.0, -3.0, -1.0, -0.1, 0.0, 0.1, 0.5, 1.0, 1.96, 3.0, 5.0, 8.0, 10.0,
          20.0, 37.0]
    return {
        "quantile": [{"p": p, "z": float(sp.ndtri(p))} for p in ps],
        "upper_tail": [{"z": z, "q": float(sp.ndtr(-z))} for z in zs],
    }


# ---------------------------------------------------------------------------
# Multivariate statistics from the published formulas, in numpy
# ---------------------------------------------------------------------------
def ml_whitened(X):
    n = len(X)
    Xc = X - X.mean(axis=0)
    S = Xc.T @ Xc / n
    L = np.linalg.cholesky(S)
    return np.linalg.solve(L, Xc.T).T


def mardia(X):
    n, p = X.shape
    Z = ml_whitened(X)
    G = Z @ Z.T  # the n x n matrix of g_ij
    b1 = float((G ** 3).sum() / n ** 2)
    b2 = float((np.diag(G) ** 2).sum() / n)
    df = p * (p + 1) * (p + 2) / 6
    skew = n * b1 / 6
    k = (p + 1) * (n + 1) * (n + 3) / (n * ((n + 1) * (p + 1) - 6))
    skew_c = n * k * b1 / 6
    mean = p * (p + 2) * (n - 1) / (n + 1)
    var = 8 * p * (p + 2) * (n - 3) * (n - p - 1) * (n - p + 1) / ((n + 1) ** 2 * (n + 3) * (n + 5))
    z = (b2 - mean) / np.sqrt(var)
    return {
        "b1p": b1, "b2p": b2, "skewness_statistic": skew, "skewness_dof": df,
        "skewness_p_value": float(st.chi2.sf(skew, df)),
        "corrected_skewness_statistic": skew_c,
        "corrected_skewness_p_value": float(st.chi2.sf(skew_c, df)),
        "kurtosis_mean": mean, "kurtosis_variance": var, "kurtosis_z": float(z),
        "kurtosis_p_value": float(2 * sp.ndtr(-abs(z))),
    }


def henze_zirkler(X):
    n, p = X.shape
    Z = ml_whitened(X)
    G = Z @ Z.T
    d = np.diag(G)
    D = d[:, None] + d[None, :] - 2 * G
    b = (1 / np.sqrt(2)) * ((n * (2 * p + 1)) / 4) ** (1 / (p + 4))
    b2 = b * b
    T = (np.exp(-b2 / 2 * D).sum() / n
         - 2 * (1 + b2) ** (-p / 2) * np.exp(-b2 / (2 * (1 + b2)) * d).sum()
         + n * (1 + 2 * b2) ** (-p / 2))
    a = 1 + 2 * b2
    w = (1 + b2) * (1 + 3 * b2)
    mu = 1 - a ** (-p / 2) * (1 + p * b2 / a + p * (p + 2) * b2 ** 2 / (2 * a ** 2))
    s2 = (2 * (1 + 4 * b2) ** (-p / 2)
          + 2 * a ** (-p) * (1 + 2 * p * b2 ** 2 / a ** 2 + 3 * p * (p + 2) * b2 ** 4 / (4 * a ** 4))
          - 4 * w ** (-p / 2) * (1 + 3 * p * b2 ** 2 / (2 * w) + p * (p + 2) * b2 ** 4 / (2 * w ** 2)))
    lmu = np.log(np.sqrt(mu ** 4 / (s2 + mu ** 2)))
    lsd = np.sqrt(np.log((s2 + mu ** 2) / mu ** 2))
    pv = sp.ndtr(-(np.log(T) - lmu) / lsd)
    return {"statistic": float(T), "beta": float(b), "null_mean": float(mu),
            "null_variance": float(s2), "p_value": float(pv)}


def royston(X):
    n, p = X.shape
    R = np.abs(np.corrcoef(X, rowvar=False))
    res = [st.shapiro(X[:, j]) for j in range(p)]
    pv = np.array([r.pvalue for r in res])
    Rj = sp.ndtri(pv / 2) ** 2
    mu, lam = 0.715, 5
    ln = np.log(n)
    nu = 0.21364 + 0.015124 * ln ** 2 - 0.0018034 * ln ** 3
    C = R ** lam * (1 - (mu / nu) * (1 - R) ** mu)
    cbar = (C.sum() - p) / (p * (p - 1)) if p > 1 else 0.0
    e = p / (1 + (p - 1) * cbar)
    H = e * Rj.sum() / p
    return {"statistic": float(H), "equivalent_dof": float(e), "p_value": float(st.chi2.sf(H, e)),
            "mean_transformed_correlation": float(cbar),
            "shapiro_w": [float(r.statistic) for r in res], "shapiro_p_value": floats(pv)}


def doornik_hansen(X):
    n, p = X.shape
    Xc = X - X.mean(axis=0)
    S = Xc.T @ Xc / (n - 1)
    V = np.diag(1 / np.sqrt(np.diag(S)))
    C = V @ S @ V
    lam, H = np.linalg.eigh(C)
    Y = (H @ np.diag(lam ** -0.5) @ H.T @ V @ Xc.T).T
    Y = Y - Y.mean(axis=0)
    m2 = (Y ** 2).mean(axis=0)
    m3 = (Y ** 3).mean(axis=0)
    m4 = (Y ** 4).mean(axis=0)
    rb1 = m3 / m2 ** 1.5
    b2 = m4 / m2 ** 2
    beta = 3 * (n * n + 27 * n - 70) * (n + 1) * (n + 3) / ((n - 2) * (n + 5) * (n + 7) * (n + 9))
    w2 = -1 + np.sqrt(2 * (beta - 1))
    delta = 1 / np.sqrt(np.log(np.sqrt(w2)))
    y = rb1 * np.sqrt((w2 - 1) * (n + 1) * (n + 3) / (12 * (n - 2)))
    z1 = delta * np.log(y + np.sqrt(y * y + 1))
    dd = (n - 3) * (n + 1) * (n * n + 15 * n - 4)
    a = (n - 2) * (n + 5) * (n + 7) * (n * n + 27 * n - 70) / (6 * dd)
    c = (n - 7) * (n + 5) * (n + 7) * (n * n + 2 * n - 5) / (6 * dd)
    k = (n + 5) * (n + 7) * (n ** 3 + 37 * n * n + 11 * n - 313) / (12 * dd)
    b1 = rb1 ** 2
    alpha = a + b1 * c
    chi = (b2 - 1 - b1) * 2 * k
    z2 = (np.cbrt(chi / (2 * alpha)) - 1 + 1 / (9 * alpha)) * np.sqrt(9 * alpha)
    E = float((z1 ** 2).sum() + (z2 ** 2).sum())
    return {"statistic": E, "dof": 2 * p, "p_value": float(st.chi2.sf(E, 2 * p)),
            "skewness_z": floats(z1), "kurtosis_z": floats(z2)}


def per_variable(X):
    Xc = X - X.mean(axis=0)
    m2 = (Xc ** 2).mean(axis=0)
    return {"skewness": floats((Xc ** 3).mean(axis=0) / m2 ** 1.5),
            "kurtosis": floats((Xc ** 4).mean(axis=0) / m2 ** 2)}


def qq(X):
    n, p = X.shape
    Z = ml_whitened(X)
    d2 = np.sort((Z ** 2).sum(axis=1))
    q = st.chi2.ppf((np.arange(1, n + 1) - 0.5) / n, p)
    return {"chi_square_quantiles": floats(q), "sorted_squared_distances": floats(d2)}


def datasets():
    iris = load_iris()
    wine = load_wine()
    diab = load_diabetes()
    bc = load_breast_cancer()
    yield ("iris", "load_iris().data, all 150 rows x 4 columns", iris.data)
    yield ("iris_setosa", "load_iris().data[:50] (setosa), 50 x 4", iris.data[:50])
    yield ("iris_versicolor_first_12_petals",
           "load_iris().data[50:62, 2:4] (versicolor petal length and width), 12 x 2",
           iris.data[50:62, 2:4])
    yield ("wine", "load_wine().data, all 178 rows x 13 columns", wine.data)
    yield ("diabetes", "load_diabetes().data (as shipped: centred and scaled), 442 x 10", diab.data)
    yield ("breast_cancer_log_six",
           "np.log(load_breast_cancer().data[:, [1, 4, 5, 8, 21, 24]]), 569 x 6 "
           "(columns with positive values, near-normal after a log)",
           np.log(bc.data[:, [1, 4, 5, 8, 21, 24]]))


def multivariate_cases():
    out = []
    for name, source, X in datasets():
        X = np.ascontiguousarray(X, dtype=np.float64)
        n, p = X.shape
        case = {"name": name, "source": source, "n": n, "p": p, "data": floats(X),
                "mardia": mardia(X), "henze_zirkler": henze_zirkler(X),
                "doornik_hansen": doornik_hansen(X), "per_variable": per_variable(X)}
        if n >= 3:
            case["royston"] = royston(X)
        if name in ("iris", "iris_setosa"):
            case["qq"] = qq(X)
        out.append(case)
    return out


def main():
    os.makedirs(OUT, exist_ok=True)
    write("shapiro_wilk.json", {
        "provenance": {
            "script": SCRIPT, "versions": VERSIONS,
            "method": "cases[].w and cases[].p_value = scipy.stats.shapiro(data); for n = 3 "
                      "also exact_w and exact_p_value in 50-digit mpmath; "
                      "normal.quantile[].z = scipy.special.ndtri(p); "
                      "normal.upper_tail[].q = scipy.special.ndtr(-z)",
        },
        "cases": shapiro_cases(),
        "normal": normal_cases(),
    })
    write("normality_reference.json", {
        "provenance": {
            "script": SCRIPT, "versions": VERSIONS,
            "method": "numpy float64 evaluation of the published formulas listed in the "
                      "script's docstring, with explicit n x n matrices; Royston's H uses "
                      "scipy.stats.shapiro for the per-variable W and p-values; chi-square "
                      "quantiles from scipy.stats.chi2.ppf((i - 1/2)/n, p)",
        },
        "cases": multivariate_cases(),
    })


if __name__ == "__main__":
    sys.exit(main())
