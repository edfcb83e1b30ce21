#!/usr/bin/env python3
"""Generate the JSON reference fixtures used by the mvdist test suite.

Run from the crate root (or anywhere; paths are resolved relative to this file):

    python3 tests/reference/make_fixtures.py

Writes into tests/fixtures/:

  breast_cancer_distances.json  covariance, squared Mahalanobis distances, log-det, cond
  iris_covariance.json          plain / pooled-within-group / weighted covariance
  tail_probabilities.json       chi2 / beta / F survival functions and upper quantiles
  control_limits.json           T^2 control limits for individual observations
  ill_conditioned.json          distances under scatters with condition number ~1e12

Every input matrix comes from a dataset bundled inside the scikit-learn wheel
(no network access) and every file records the package versions used.
Reference values are computed with numpy / scipy in float64 and, where stated,
re-checked (or replaced) with mpmath at 50-60 significant digits.

Floats are written with Python's shortest round-trip repr, so a reader that
parses with correct rounding recovers the exact float64 values.
"""

import json
import math
import os
import platform
import sys
import time

import mpmath
import numpy as np
import scipy
import scipy.linalg
import scipy.stats as st
import sklearn
from sklearn.datasets import load_breast_cancer, load_iris

HERE = os.path.dirname(os.path.abspath(__file__))
CRATE = os.path.dirname(os.path.dirname(HERE))
OUT = os.path.join(CRATE, "tests", "fixtures")
SCRIPT = "tests/reference/make_fixtures.py"

VERSIONS = {
    "python": platform.python_version(),
    "numpy": np.__version__,
    "scipy": scipy.__version__,
    "scikit-learn": sklearn.__version__,
    "mpmath": mpmath.__version__,
    "platform": platform.platform(),
}


def provenance(source, method, **extra):
    p = {"script": SCRIPT, "versions": VERSIONS, "source": source, "method": method}
    p.update(extra)
    return p


def tolist(a):
    """numpy array -> nested lists of Python floats / ints."""
    return np.asarray(a).tolist()


def write(name, obj):
    path = os.path.join(OUT, name)
    with open(path, "w") as f:
        json.dump(obj, f, allow_nan=False, separators=(",", ":"))
        f.write("\n")
    # validate: parse back and make sure floats round-trip exactly
    with open(path) as f:
        back = json.load(f)
    assert back == json.loads(json.dumps(obj, allow_nan=False)), name
    print(f"wrote {path} ({os.path.getsize(path)} bytes)")


def rel(a, b):
    a = float(a)
    b = float(b)
    if a == b:
        return 0.0
    return abs(a - b) / max(abs(b), 1e-300)


# ---------------------------------------------------------------------------
# (a) breast cancer: covariance and squared Mahalanobis distances
# ---------------------------------------------------------------------------
def mp_inverse(S, dps):
    with mpmath.workdps(dps):
        M = mpmath.matrix([[mpmath.mpf(float(v)) for v in row] for row in S])
        return M ** -1


def mp_quadform(Minv, d, dps):
    """d^T Minv d in mpmath, d given as float64 vector (converted exactly)."""
    with mpmath.workdps(dps):
        p = len(d)
        v = [mpmath.mpf(float(x)) for x in d]
        s = mpmath.mpf(0)
        for i in range(p):
            acc = mpmath.mpf(0)
            row = i
            for j in range(p):
                acc += Minv[row, j] * v[j]
            s += v[i] * acc
        return s


def make_breast_cancer():
    ds = load_breast_cancer()
    X = np.ascontiguousarray(ds.data, dtype=np.float64)
    n, p = X.shape
    mean = X.mean(axis=0)
    S = np.cov(X, rowvar=False)  # ddof=1
    S_ml = np.cov(X, rowvar=False, ddof=0)
    D = X - mean

    cf = scipy.linalg.cho_factor(S, lower=True)
    d2 = np.einsum("ij,ij->i", D, scipy.linalg.cho_solve(cf, D.T).T)
    d2_solve = np.einsum("ij,ij->i", D, np.linalg.solve(S, D.T).T)
    max_rel_solve = float(np.max(np.abs(d2 - d2_solve) / np.abs(d2_solve)))
    assert max_rel_solve < 1e-9, max_rel_solve

    a_rows = list(range(0, 10))
    b_rows = list(range(10, 20))
    pair = np.empty((10, 10))
    pair_solve = np.empty((10, 10))
    for i, a in enumerate(a_rows):
        for j, b in enumerate(b_rows):
            d = X[a] - X[b]
            pair[i, j] = d @ scipy.linalg.cho_solve(cf, d)
            pair_solve[i, j] = d @ np.linalg.solve(S, d)
    max_rel_pair = float(np.max(np.abs(pair - pair_solve) / np.abs(pair_solve)))
    assert max_rel_pair < 1e-9, max_rel_pair

    sign, logdet = np.linalg.slogdet(S)
    assert sign == 1.0
    cond = np.linalg.cond(S)

    # Independent high-precision check: invert the float64 covariance in mpmath
    # (50 digits) and evaluate d^T S^-1 d for every row with d = float64(x - mean).
    Sinv_mp = mp_inverse(S, 50)
    max_rel_mp = 0.0
    for i in range(n):
        ref = mp_quadform(Sinv_mp, D[i], 50)
        max_rel_mp = max(max_rel_mp, rel(d2[i], ref))

    obj = {
        "provenance": provenance(
            source=f"sklearn.datasets.load_breast_cancer() (Wisconsin diagnostic breast cancer, "
            f"bundled with scikit-learn {sklearn.__version__}), all 569 rows x 30 features, float64",
            method=(
                "mean = X.mean(axis=0); cov_unbiased = np.cov(X, rowvar=False) (ddof=1); "
                "cov_ml = np.cov(X, rowvar=False, ddof=0); "
                "d2_unbiased[i] = d^T cov_unbiased^-1 d with d = X[i] - mean (float64 subtraction), "
                "solved with scipy.linalg.cho_factor(lower=True)/cho_solve, cross-checked against "
                "np.linalg.solve (assert max relative difference < 1e-9); "
                "pair_d2[i][j] = e^T cov_unbiased^-1 e with e = data[pair_rows_a[i]] - data[pair_rows_b[j]], "
                "same solver and cross-check; log_det_unbiased = np.linalg.slogdet(cov_unbiased)[1] (sign +1); "
                "cond_unbiased = np.linalg.cond(cov_unbiased) (2-norm, SVD). "
                "Additional check: d2_unbiased compared with mpmath (50 digits) using the inverse of the exact "
                "float64 cov_unbiased and the exact float64 d."
            ),
            checks={
                "d2_max_rel_diff_cho_vs_np_linalg_solve": max_rel_solve,
                "pair_d2_max_rel_diff_cho_vs_np_linalg_solve": max_rel_pair,
                "d2_max_rel_diff_cho_vs_mpmath50": max_rel_mp,
            },
        ),
        "n": n,
        "p": p,
        "columns": [str(c) for c in ds.feature_names],
        "data": tolist(X),
        "mean": tolist(mean),
        "cov_unbiased": tolist(S),
        "cov_ml": tolist(S_ml),
        "d2_unbiased": tolist(d2),
        "pair_rows_a": a_rows,
        "pair_rows_b": b_rows,
        "pair_d2": tolist(pair),
        "log_det_unbiased": float(logdet),
        "cond_unbiased": float(cond),
    }
    write("breast_cancer_distances.json", obj)
    return {"cond": cond, "max_rel_solve": max_rel_solve, "max_rel_mp": max_rel_mp}


# ---------------------------------------------------------------------------
# (b) iris: plain, pooled within-group and weighted covariance
# ---------------------------------------------------------------------------
def make_iris():
    ds = load_iris()
    X = np.ascontiguousarray(ds.data, dtype=np.float64)
    y = ds.target.astype(int)
    n, p = X.shape
    groups = sorted(set(y.tolist()))
    G = len(groups)
    scatter = np.zeros((p, p))
    group_means = []
    group_counts = []
    for g in groups:
        Xg = X[y == g]
        ng = Xg.shape[0]
        group_counts.append(int(ng))
        group_means.append(Xg.mean(axis=0))
        scatter += (ng - 1) * np.cov(Xg, rowvar=False)
    pooled_unb = scatter / (n - G)
    pooled_ml = scatter / n

    w = np.array([1 + (i % 5) for i in range(n)], dtype=np.float64)
    wmean = np.average(X, axis=0, weights=w)
    wcov1 = np.cov(X, rowvar=False, aweights=w, ddof=1)
    wcov0 = np.cov(X, rowvar=False, aweights=w, ddof=0)

    obj = {
        "provenance": provenance(
            source=f"sklearn.datasets.load_iris() (Fisher/Anderson iris, bundled with scikit-learn "
            f"{sklearn.__version__}), 150 rows x 4 features, float64; labels = target",
            method=(
                "mean = X.mean(axis=0); cov_unbiased = np.cov(X, rowvar=False); cov_ml = ddof=0; "
                "group_means[g] = X[labels==g].mean(axis=0); S_g = np.cov(X[labels==g], rowvar=False) (ddof=1); "
                "pooled_within_unbiased = sum_g (n_g-1) S_g / (n - G); pooled_within_ml = same sum / n; "
                "weights[i] = 1 + (i mod 5) (0-based row index); weighted_mean = np.average(X, axis=0, weights=w); "
                "weighted_cov_reliability_ddof1 = np.cov(X, rowvar=False, aweights=w, ddof=1) "
                "(= sum_i w_i (x_i-m)(x_i-m)^T / (V1 - V2/V1), V1 = sum w, V2 = sum w^2); "
                "weighted_cov_ddof0 = np.cov(X, rowvar=False, aweights=w, ddof=0) (= ... / V1)"
            ),
        ),
        "n": n,
        "p": p,
        "columns": [str(c) for c in ds.feature_names],
        "data": tolist(X),
        "labels": y.tolist(),
        "label_names": [str(c) for c in ds.target_names],
        "mean": tolist(X.mean(axis=0)),
        "cov_unbiased": tolist(np.cov(X, rowvar=False)),
        "cov_ml": tolist(np.cov(X, rowvar=False, ddof=0)),
        "group_counts": group_counts,
        "group_means": tolist(np.array(group_means)),
        "pooled_within_unbiased": tolist(pooled_unb),
        "pooled_within_ml": tolist(pooled_ml),
        "weights": tolist(w),
        "weighted_mean": tolist(wmean),
        "weighted_cov_reliability_ddof1": tolist(wcov1),
        "weighted_cov_ddof0": tolist(wcov0),
    }
    write("iris_covariance.json", obj)


# ---------------------------------------------------------------------------
# mpmath reference distributions (survival function, cdf, log pdf)
# ---------------------------------------------------------------------------
# A point is represented by the pair (x, 1-x) for beta so that points very near
# 1 keep full relative accuracy in 1-x; for chi2 and F only x is used.

def mp_point(dist, x):
    """Exact point for a float64 x: for beta 1-x is formed without rounding."""
    x = mpmath.mpf(x)
    if dist == "beta":
        return (x, mpmath.fsub(1, x, exact=True))
    return (x, None)


def mp_sf_cdf(dist, params, pt):
    """Return (sf, cdf, logsf) at the point.

    Both tails are available as lower regularized incomplete integrals:
    chi2 sf = Q(k/2, x/2), cdf = P(k/2, x/2); beta sf = I_{1-x}(b, a),
    cdf = I_x(a, b); F sf = I_{d2/(d2+d1 x)}(d2/2, d1/2), cdf = I_{d1 x/(d2+d1 x)}(d1/2, d2/2).
    The smaller tail is evaluated directly and the other one as its
    complement, so neither suffers cancellation or argument rounding."""
    x, omx = pt
    if dist == "chi2":
        (k,) = params
        h = mpmath.mpf(k) / 2
        lower = lambda: mpmath.gammainc(h, 0, x / 2, regularized=True)
        upper = lambda: mpmath.gammainc(h, x / 2, mpmath.inf, regularized=True)
        small_is_cdf = x / 2 < h  # below the mean of Gamma(h): cdf is the smaller tail (approx.)
    elif dist == "beta":
        a, b = (mpmath.mpf(v) for v in params)
        lower = lambda: mpmath.betainc(a, b, 0, x, regularized=True)
        upper = lambda: mpmath.betainc(b, a, 0, omx, regularized=True)
        small_is_cdf = x < a / (a + b)
    elif dist == "f":
        d1, d2 = (mpmath.mpf(v) for v in params)
        den = d2 + d1 * x
        lower = lambda: mpmath.betainc(d1 / 2, d2 / 2, 0, d1 * x / den, regularized=True)
        upper = lambda: mpmath.betainc(d2 / 2, d1 / 2, 0, d2 / den, regularized=True)
        small_is_cdf = x < 1
    else:
        raise ValueError(dist)
    if small_is_cdf:
        cdf = lower()
        sf = 1 - cdf
        logsf = mpmath.log1p(-cdf)
    else:
        sf = upper()
        cdf = 1 - sf
        logsf = mpmath.log(sf)
    return sf, cdf, logsf


def mp_logpdf(dist, params, pt):
    x, omx = pt
    if dist == "chi2":
        (k,) = params
        h = mpmath.mpf(k) / 2
        return (h - 1) * mpmath.log(x) - x / 2 - h * mpmath.log(2) - mpmath.loggamma(h)
    if dist == "beta":
        a, b = (mpmath.mpf(v) for v in params)
        lb = mpmath.loggamma(a) + mpmath.loggamma(b) - mpmath.loggamma(a + b)
        return (a - 1) * mpmath.log(x) + (b - 1) * mpmath.log(omx) - lb
    if dist == "f":
        d1, d2 = (mpmath.mpf(v) for v in params)
        lb = mpmath.loggamma(d1 / 2) + mpmath.loggamma(d2 / 2) - mpmath.loggamma((d1 + d2) / 2)
        return (
            (d1 * mpmath.log(d1 * x) + d2 * mpmath.log(d2) - (d1 + d2) * mpmath.log(d1 * x + d2)) / 2
            - mpmath.log(x)
            - lb
        )
    raise ValueError(dist)


def mp_quantile(dist, params, prob, guess=None, dps=50, tail="upper"):
    """Solve sf(x) = prob (tail="upper") or cdf(x) = prob (tail="lower") in mpmath.

    Works in an unbounded coordinate u (u = log x for chi2/F, u = logit x for
    beta) with a sign-change bracket and safeguarded Newton steps on the
    decreasing function g(u) = log sf - log alpha (upper, alpha <= 1/2),
    log(1 - alpha) - log cdf (upper, alpha > 1/2) or log alpha - log cdf (lower).
    Returns the point (x, 1-x or None) at working precision.
    """
    with mpmath.workdps(dps):
        alpha = mpmath.mpf(prob)
        if tail == "upper":
            use_sf = alpha <= mpmath.mpf(1) / 2
            target = mpmath.log(alpha) if use_sf else mpmath.log(1 - alpha)
        else:
            use_sf = False
            target = mpmath.log(alpha)

        def point(u):
            if dist == "beta":
                return (1 / (1 + mpmath.exp(-u)), 1 / (1 + mpmath.exp(u)))
            return (mpmath.exp(u), None)

        def g_and_dg(u):
            pt = point(u)
            sf, cdf, _ = mp_sf_cdf(dist, params, pt)
            lpdf = mp_logpdf(dist, params, pt)
            x, omx = pt
            dxdu = x * omx if dist == "beta" else x
            pdf_du = mpmath.exp(lpdf) * dxdu
            if use_sf:
                if sf == 0:
                    return -mpmath.inf, None
                return mpmath.log(sf) - target, -pdf_du / sf
            if cdf == 0:
                return mpmath.inf, None
            return target - mpmath.log(cdf), -pdf_du / cdf

        if guess is not None and math.isfinite(guess) and guess > 0 and (dist != "beta" or guess < 1):
            gx = mpmath.mpf(guess)
            u0 = mpmath.log(gx / (1 - gx)) if dist == "beta" else mpmath.log(gx)
        elif dist == "chi2":
            u0 = mpmath.log(params[0])
        elif dist == "f":
            u0 = mpmath.mpf(0)
        else:
            u0 = mpmath.log(mpmath.mpf(params[0]) / params[1])

        # bracket: g decreasing in u
        g0, _ = g_and_dg(u0)
        step = mpmath.mpf("0.125")
        lo = hi = u0
        glo = ghi = g0
        if g0 > 0:
            while ghi > 0:
                lo, glo = hi, ghi
                hi = hi + step
                step *= 2
                ghi, _ = g_and_dg(hi)
        else:
            while glo < 0:
                hi, ghi = lo, glo
                lo = lo - step
                step *= 2
                glo, _ = g_and_dg(lo)
        u = u0 if lo <= u0 <= hi else (lo + hi) / 2
        tol = mpmath.mpf(10) ** (-(dps - 8))
        for _ in range(400):
            gu, dg = g_and_dg(u)
            if gu == 0:
                break
            if gu > 0:
                lo = u
            else:
                hi = u
            new = None
            if dg is not None and dg != 0 and mpmath.isfinite(gu):
                new = u - gu / dg
            if new is None or not (lo < new < hi):
                new = (lo + hi) / 2
            if abs(new - u) <= tol * (1 + abs(u)) or hi - lo <= tol * (1 + abs(u)):
                u = new
                break
            u = new
        else:
            raise RuntimeError(f"quantile did not converge: {dist} {params} {upper_prob}")
        return point(u)


def scipy_dist(dist, params):
    if dist == "chi2":
        return st.chi2(*params)
    if dist == "beta":
        return st.beta(*params)
    if dist == "f":
        return st.f(*params)
    raise ValueError(dist)


# ---------------------------------------------------------------------------
# (c) tail probabilities and upper quantiles
# ---------------------------------------------------------------------------
CHI2_DF = [1, 2, 3, 7, 8, 30, 128, 1000]
# Beta(p/2, (n-p-1)/2) shapes; the last three match the benchmark sizes
# (p, n) = (8, 1e6), (32, 1e6), (128, 2e5) exactly.
BETA_AB = [(1, 5), (4, 47.5), (15, 484), (0.5, 0.5), (4, 499995),
           (4, 499995.5), (16, 499983.5), (64, 99935.5)]
F_DF = [(1, 10), (8, 992), (32, 999968), (128, 199872), (2, 3), (7, 500)]

UPPER_TARGETS = [0.9, 0.5, 0.1, 1e-2, 1e-5, 1e-10, 1e-20, 1e-50, 1e-100, 1e-200, 1e-300]
LOWER_TARGETS = [1e-3, 1e-10, 1e-30]
BETA_NEAR_ONE = [1 - 1e-4, 1 - 1e-8, 1 - 2.0 ** -40, 1 - 2.0 ** -52]
QUANTILE_ALPHAS = [0.5, 0.1, 0.05, 0.01, 1e-3, 1e-6, 1e-10, 1e-20, 1e-50, 1e-100]

# scipy value is kept when it agrees with the 50-digit mpmath value to this
# relative tolerance (in every field); otherwise the mpmath value is stored.
SF_TOL = 1e-13
Q_TOL = 1e-13


def make_tail_probabilities():
    param_sets = ([("chi2", [k]) for k in CHI2_DF]
                  + [("beta", [a, b]) for a, b in BETA_AB]
                  + [("f", [d1, d2]) for d1, d2 in F_DF])

    cases = []
    quantiles = []
    max_rel = {"sf": 0.0, "cdf": 0.0, "logsf": 0.0}
    worst = {}
    n_replaced = 0
    max_q_rel = 0.0
    worst_q = None
    n_q_replaced = 0
    mp_self = 0.0  # 50 vs 70 digit self-consistency of mpmath
    replaced_notes = []

    for dist, params in param_sets:
        D = scipy_dist(dist, params)
        # --- x grid: quantiles (rounded to float) of a set of tail targets
        xs = []
        for t in UPPER_TARGETS:
            g = D.isf(t)
            pt = mp_quantile(dist, params, t, guess=g)
            xs.append(float(pt[0]))
        for t in LOWER_TARGETS:
            g = D.ppf(t)
            pt = mp_quantile(dist, params, t, guess=g, tail="lower")
            xs.append(float(pt[0]))
        if dist == "beta":
            xs += BETA_NEAR_ONE
        xs = sorted(set(x for x in xs if math.isfinite(x) and x > 0 and (dist != "beta" or x < 1)))

        for x in xs:
            sf = float(D.sf(x))
            cdf = float(D.cdf(x))
            logsf = float(D.logsf(x))
            if not (sf > 0) or math.isnan(cdf) or not math.isfinite(logsf):
                continue
            with mpmath.workdps(50):
                pt = mp_point(dist, x)
                msf, mcdf, mlogsf = mp_sf_cdf(dist, params, pt)
                ref = {"sf": float(msf), "cdf": float(mcdf), "logsf": float(mlogsf)}
            with mpmath.workdps(70):
                pt70 = mp_point(dist, x)
                msf70, mcdf70, _ = mp_sf_cdf(dist, params, pt70)
                mp_self = max(mp_self, float(abs(msf - msf70) / msf70), float(abs(mcdf - mcdf70) / mcdf70))
            errs = {"sf": rel(sf, ref["sf"]), "cdf": rel(cdf, ref["cdf"]), "logsf": rel(logsf, ref["logsf"])}
            for k, e in errs.items():
                if e > max_rel[k]:
                    max_rel[k] = e
                    worst[k] = {"dist": dist, "params": params, "x": x, "scipy": {"sf": sf, "cdf": cdf, "logsf": logsf}[k],
                                "mpmath": ref[k]}
            case = {"dist": dist, "params": params, "x": x}
            if max(errs.values()) > SF_TOL:
                case.update(ref)
                case["reference"] = "mpmath"
                case["scipy_values"] = {"sf": sf, "cdf": cdf, "logsf": logsf}
                n_replaced += 1
                replaced_notes.append(f"{dist}{tuple(params)} x={x!r}: max rel diff {max(errs.values()):.3g}")
            else:
                case.update({"sf": sf, "cdf": cdf, "logsf": logsf})
                case["reference"] = "scipy"
            case["mpmath"] = ref
            case["max_rel_diff_scipy_vs_mpmath"] = max(errs.values())
            cases.append(case)

        # --- upper quantiles
        for a in QUANTILE_ALPHAS:
            q = float(D.isf(a))
            pt = mp_quantile(dist, params, a, guess=q)
            mq = float(pt[0])
            if not math.isfinite(mq) or mq <= 0 or (dist == "beta" and mq >= 1):
                continue  # not representable as a float64 quantile
            entry = {"dist": dist, "params": params, "upper_prob": a}
            if math.isfinite(q) and q > 0:
                e = rel(q, mq)
            else:
                e = math.inf
            if e > max_q_rel and math.isfinite(e):
                max_q_rel = e
                worst_q = {"dist": dist, "params": params, "upper_prob": a, "scipy": q, "mpmath": mq}
            if e > Q_TOL:
                entry["isf"] = mq
                entry["reference"] = "mpmath"
                entry["scipy_isf"] = q if math.isfinite(q) else None  # null: scipy returned inf/nan
                n_q_replaced += 1
                replaced_notes.append(f"isf {dist}{tuple(params)} alpha={a!r}: scipy {q!r} vs mpmath {mq!r}")
            else:
                entry["isf"] = q
                entry["reference"] = "scipy"
            entry["isf_mpmath"] = mq
            entry["rel_diff_scipy_vs_mpmath"] = e if math.isfinite(e) else None
            quantiles.append(entry)

    obj = {
        "provenance": provenance(
            source="no data set: distribution parameters chosen to match the tests and benchmarks "
            "(Beta shapes are (p/2, (n-p-1)/2), F degrees of freedom are (p, n-p))",
            method=(
                "Each case: x is the float64 rounding of the mpmath 50-digit quantile for upper tail probabilities "
                f"{UPPER_TARGETS} and lower tail probabilities {LOWER_TARGETS} (plus, for beta, x = 1-1e-4, 1-1e-8, "
                "1-2^-40, 1-2^-52). sf/cdf/logsf = scipy.stats.<dist>(*params).sf/.cdf/.logsf(x) "
                "(chi2(df), beta(a, b), f(dfn, dfd)); cases where scipy returns sf 0/nan are skipped. Every case "
                "is re-evaluated with mpmath at 50 digits: chi2 sf = gammainc(k/2, x/2, inf, regularized=True), "
                "cdf = gammainc(k/2, 0, x/2, regularized=True); beta sf = betainc(b, a, 0, 1-x, regularized=True), "
                "cdf = betainc(a, b, 0, x, regularized=True); F sf = betainc(d2/2, d1/2, 0, d2/(d2+d1 x)), "
                "cdf = betainc(d1/2, d2/2, 0, d1 x/(d2+d1 x)); only the smaller tail is evaluated directly, the other "
                "is 1 minus it (1-x for beta formed exactly); logsf = log(sf), or log1p(-cdf) when the lower tail "
                "is the directly evaluated one. "
                f"If any scipy field differs from mpmath by more than {SF_TOL} relative, the case stores the mpmath "
                "values ('reference': 'mpmath', scipy's in 'scipy_values'), else scipy's ('reference': 'scipy'). "
                "Every case also carries the mpmath values rounded to float64 in 'mpmath' (the most accurate "
                "value for the exact float64 x; in far tails the problem itself is ill-conditioned, e.g. "
                "chi2 sf near 1e-300 changes by ~x/2 ulps per ulp of x). "
                "Quantiles: isf = scipy.stats.<dist>(*params).isf(upper_prob), checked against an mpmath 50-digit "
                "root of sf(x) = upper_prob (safeguarded Newton on log sf); when the relative difference exceeds "
                f"{Q_TOL} or scipy returns inf/nan, the mpmath root rounded to float64 is stored "
                "('reference': 'mpmath', scipy's in 'scipy_isf', null if scipy returned inf); every quantile also "
                "carries 'isf_mpmath' and 'rel_diff_scipy_vs_mpmath' (null when scipy gave inf). Quantiles not representable in float64 "
                "(beta quantile rounding to 1.0) are omitted."
            ),
            checks={
                "max_rel_diff_scipy_vs_mpmath": max_rel,
                "worst_cases": worst,
                "cases_using_mpmath": n_replaced,
                "max_rel_diff_isf_scipy_vs_mpmath_finite": max_q_rel,
                "worst_isf": worst_q,
                "quantiles_using_mpmath": n_q_replaced,
                "mpmath_50_vs_70_digits_max_rel_diff": mp_self,
                "replaced": replaced_notes,
            },
            findings=[
                "scipy.stats.f.isf(q) is evaluated as ppf(1 - q): it returns inf for q below ~1e-16 and loses "
                "relative accuracy ~eps/q (5.5e-8 relative at q = 1e-10 for F(2, 3)); mpmath roots are stored there.",
                "scipy.stats.beta.sf(x, 0.5, 0.5) returns 1.0 at x = 2.47e-20 where the true value is 1 - 1e-10 "
                "(scipy.special.betaincc loses the small lower tail); scipy's beta(0.5, 0.5) cdf just below 1 is "
                "off by ~2e-12.",
                "scipy.stats.f.sf with dfd = 999968 is off by up to ~3e-11 relative; beta with b ~ 5e5 by ~2e-12.",
                "chi2 with df = 1000: scipy differs by up to ~2e-13 relative.",
            ],
        ),
        "cases": cases,
        "quantiles": quantiles,
    }
    write("tail_probabilities.json", obj)
    return obj["provenance"]["checks"], len(cases), len(quantiles)


# ---------------------------------------------------------------------------
# (d) T^2 control limits for individual observations
# ---------------------------------------------------------------------------
def make_control_limits():
    cases = []
    max_rel1 = 0.0
    max_rel2 = 0.0
    notes = []
    for m in [20, 25, 50, 100, 500]:
        for p in [2, 3, 5, 10]:
            if not m > p + 1:
                continue
            for alpha in [0.05, 0.01, 0.0027, 0.001]:
                a_, b_ = p / 2, (m - p - 1) / 2
                bq = st.beta.isf(alpha, a_, b_)
                fq = st.f.isf(alpha, p, m - p)
                ucl1 = (m - 1) ** 2 / m * bq
                ucl2 = p * (m + 1) * (m - 1) / (m * m - m * p) * fq
                with mpmath.workdps(50):
                    mb = mp_quantile("beta", [a_, b_], alpha, guess=bq)[0]
                    mf = mp_quantile("f", [p, m - p], alpha, guess=fq)[0]
                    m_ = mpmath.mpf(m)
                    r1 = float((m_ - 1) ** 2 / m_ * mb)
                    r2 = float(p * (m_ + 1) * (m_ - 1) / (m_ * m_ - m_ * p) * mf)
                e1, e2 = rel(ucl1, r1), rel(ucl2, r2)
                max_rel1 = max(max_rel1, e1)
                max_rel2 = max(max_rel2, e2)
                case = {"m": m, "p": p, "alpha": alpha, "phase1_ucl": float(ucl1), "phase2_ucl": float(ucl2)}
                if e1 > 1e-12:
                    case["phase1_ucl"] = r1
                    case["phase1_reference"] = "mpmath"
                    notes.append(f"phase1 m={m} p={p} alpha={alpha}: {e1:.3g}")
                if e2 > 1e-12:
                    case["phase2_ucl"] = r2
                    case["phase2_reference"] = "mpmath"
                    notes.append(f"phase2 m={m} p={p} alpha={alpha}: {e2:.3g}")
                cases.append(case)
    obj = {
        "provenance": provenance(
            source="NIST/SEMATECH e-Handbook of Statistical Methods, section 6.5.4.3 (Hotelling T^2 charts "
            "for individual observations); no data set",
            method=(
                "m = number of individual observations, p = dimension, alpha = false-alarm probability. "
                "phase1_ucl = (m-1)^2/m * scipy.stats.beta.isf(alpha, p/2, (m-p-1)/2); "
                "phase2_ucl = p(m+1)(m-1)/(m^2 - m p) * scipy.stats.f.isf(alpha, p, m-p). "
                "Both re-checked with an mpmath 50-digit quantile (root of the regularized incomplete beta); "
                "mpmath value stored instead only if the relative difference exceeds 1e-12 (marked "
                "phase1_reference/phase2_reference = 'mpmath')."
            ),
            checks={
                "phase1_max_rel_diff_scipy_vs_mpmath": max_rel1,
                "phase2_max_rel_diff_scipy_vs_mpmath": max_rel2,
                "replaced": notes,
            },
        ),
        "cases": cases,
    }
    write("control_limits.json", obj)
    return max_rel1, max_rel2, len(cases)


# ---------------------------------------------------------------------------
# (e) ill-conditioned scatters
# ---------------------------------------------------------------------------
def mp_d2_all(S, mean, points, dps=60):
    """Exact-input reference: every float64 converted with mpmath.mpf, then
    (x-mean)^T S^-1 (x-mean) by LU solve at `dps` digits."""
    out = []
    with mpmath.workdps(dps):
        M = mpmath.matrix([[mpmath.mpf(float(v)) for v in row] for row in S])
        for x in points:
            d = mpmath.matrix([mpmath.mpf(float(xi)) - mpmath.mpf(float(mi)) for xi, mi in zip(x, mean)])
            y = mpmath.lu_solve(M, d)
            s = mpmath.mpf(0)
            for i in range(len(d)):
                s += d[i] * y[i]
            out.append(float(s))
    return out


def mp_cond(S, dps=60):
    with mpmath.workdps(dps):
        M = mpmath.matrix([[mpmath.mpf(float(v)) for v in row] for row in S])
        ev = mpmath.eigsy(M, eigvals_only=True)
        ev = [abs(v) for v in ev]
        return float(max(ev) / min(ev)), [float(v) for v in sorted(ev, reverse=True)]


def numpy_d2(S, mean, points):
    D = np.asarray(points) - np.asarray(mean)
    cf = scipy.linalg.cho_factor(np.asarray(S), lower=True)
    return np.einsum("ij,ij->i", D, scipy.linalg.cho_solve(cf, D.T).T)


def make_ill_conditioned():
    ds = load_breast_cancer()
    names = [str(c) for c in ds.feature_names]
    X = np.ascontiguousarray(ds.data, dtype=np.float64)

    # --- scaled: six mean-value features; radius re-expressed as if in a unit
    # 1000x smaller (x 1e3). radius, perimeter and area are almost collinear,
    # fractal dimension and smoothness live on a scale ~1e-2.
    cols = [0, 1, 2, 3, 4, 9]
    scale = np.array([1e3, 1.0, 1.0, 1.0, 1.0, 1.0])
    Y = X[:, cols] * scale
    mean = Y.mean(axis=0)
    S = np.cov(Y, rowvar=False)
    cond = float(np.linalg.cond(S))
    assert 1e11 < cond < 1e13, cond
    cond_mp, ev = mp_cond(S)
    pts = [Y[i].copy() for i in range(20)]
    shifted = []
    for j in range(5):
        r = Y[j].copy()
        r[j] = r[j] + 3.0 * math.sqrt(S[j, j])
        pts.append(r)
        shifted.append({"point_index": 20 + j, "source_row": j, "column": j})
    d2_ref = mp_d2_all(S, mean, pts)
    d2_np = numpy_d2(S, mean, pts)
    err_scaled = float(max(rel(a, b) for a, b in zip(d2_np, d2_ref)))
    scaled = {
        "source": "sklearn load_breast_cancer, columns " + ", ".join(f"{c} '{names[c]}'" for c in cols)
        + "; column 'mean radius' multiplied by 1e3, others unscaled",
        "columns": [names[c] for c in cols],
        "column_indices": cols,
        "scale_factors": tolist(scale),
        "p": len(cols),
        "n_rows_used_for_scatter": int(Y.shape[0]),
        "mean": tolist(mean),
        "scatter": tolist(S),
        "point_rows": list(range(20)),
        "shifted_points": shifted,
        "points": tolist(np.array(pts)),
        "d2_reference": d2_ref,
        "d2_numpy_cho_solve": tolist(d2_np),
        "cond": cond,
        "cond_mpmath": cond_mp,
        "eigenvalues_mpmath": ev,
    }

    # --- rotated: Q diag(lambda) Q^T with lambda log-spaced 1 .. 1e-12
    mu_all = X.mean(axis=0)
    sd_all = X.std(axis=0, ddof=1)
    Z = (X - mu_all) / sd_all
    block = Z[:10, :10]
    Q, _R = np.linalg.qr(block)
    lam = np.logspace(0, -12, 10)
    Sr = Q @ np.diag(lam) @ Q.T
    Sr = (Sr + Sr.T) / 2
    assert np.array_equal(Sr, Sr.T)
    cond_r = float(np.linalg.cond(Sr))
    cond_r_mp, ev_r = mp_cond(Sr)
    pts_r = Z[:20, :10]
    mean_r = pts_r.mean(axis=0)
    d2_ref_r = mp_d2_all(Sr, mean_r, pts_r)
    d2_np_r = numpy_d2(Sr, mean_r, pts_r)
    err_rot = float(max(rel(a, b) for a, b in zip(d2_np_r, d2_ref_r)))
    rotated = {
        "source": "sklearn load_breast_cancer, first 10 columns standardized over all 569 rows "
        "((x - mean)/std with ddof=1); Q from np.linalg.qr of the first 10 standardized rows x 10 columns",
        "columns": names[:10],
        "p": 10,
        "lambda": tolist(lam),
        "mean": tolist(mean_r),
        "scatter": tolist(Sr),
        "points": tolist(pts_r),
        "d2_reference": d2_ref_r,
        "d2_numpy_cho_solve": tolist(d2_np_r),
        "cond": cond_r,
        "cond_mpmath": cond_r_mp,
        "eigenvalues_mpmath": ev_r,
    }

    obj = {
        "provenance": provenance(
            source=f"sklearn.datasets.load_breast_cancer() bundled with scikit-learn {sklearn.__version__}",
            method=(
                "scaled: Y = X[:, column_indices] * scale_factors; mean = Y.mean(axis=0); "
                "scatter = np.cov(Y, rowvar=False) (ddof=1); points = Y[0:20] followed by 5 shifted rows "
                "Y[j] + 3*sqrt(scatter[j][j])*e_j for j = 0..4. "
                "rotated: Z = standardized X (ddof=1), Q = np.linalg.qr(Z[0:10, 0:10])[0], "
                "lambda = np.logspace(0, -12, 10), scatter = Q @ diag(lambda) @ Q.T then (S + S.T)/2; "
                "points = Z[0:20, 0:10]; mean = points.mean(axis=0). "
                "d2_reference[i] = (x_i - mean)^T scatter^-1 (x_i - mean) with mpmath at 60 significant digits "
                "(mpmath.lu_solve) from the exact stored float64 values (each converted with mpmath.mpf(float)), "
                "rounded to float64. cond = np.linalg.cond(scatter) (2-norm); cond_mpmath and eigenvalues_mpmath "
                "from mpmath.eigsy at 60 digits of the stored scatter. d2_numpy_cho_solve is informative only "
                "(float64 scipy cho_factor/cho_solve), to show the attainable float64 accuracy."
            ),
            checks={
                "scaled_max_rel_err_float64_cho_solve_vs_reference": err_scaled,
                "rotated_max_rel_err_float64_cho_solve_vs_reference": err_rot,
            },
        ),
        "scaled": scaled,
        "rotated": rotated,
    }
    write("ill_conditioned.json", obj)
    return cond, cond_mp, cond_r, cond_r_mp, err_scaled, err_rot


def main():
    os.makedirs(OUT, exist_ok=True)
    t0 = time.perf_counter()
    bc = make_breast_cancer()
    print("breast cancer:", bc)
    make_iris()
    checks, nc, nq = make_tail_probabilities()
    print(f"tail probabilities: {nc} cases, {nq} quantiles")
    print(json.dumps(checks, indent=1))
    print("control limits (max rel diff phase1, phase2, n):", make_control_limits())
    print("ill conditioned (cond, cond_mp, cond_rot, cond_rot_mp, err_scaled, err_rot):", make_ill_conditioned())
    print(f"done in {time.perf_counter() - t0:.1f} s")


if __name__ == "__main__":
    sys.exit(main())
