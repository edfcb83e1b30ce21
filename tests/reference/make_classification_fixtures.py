#!/usr/bin/env python3
"""Generate the reference fixtures for mvdist's classification tests.

Run from anywhere (paths are resolved relative to this file):

    python3 tests/reference/make_classification_fixtures.py

Writes tests/fixtures/classification_iris.json and
tests/fixtures/classification_wine.json.

Library versions used to make the committed files: numpy 2.4.6,
scipy 1.17.1, scikit-learn 1.9.1 (each file records the versions it was made
with). Data: sklearn.datasets.load_iris (Fisher/Anderson iris, 150 x 4, 3
species) and sklearn.datasets.load_wine (UCI wine recognition, 178 x 13, 3
cultivars), both bundled inside the scikit-learn wheel (no network access).

What is recorded, for the training rows themselves (predicted as new rows):

* sklearn LinearDiscriminantAnalysis(solver="svd") and
  QuadraticDiscriminantAnalysis(reg_param=0.0), with priors equal,
  proportional (priors=None) and given: predict_proba and predict.
  Both use the maximum-likelihood normalization in scikit-learn 1.9.1:
  LDA's svd solver scales the within-class residuals by 1/n (pooled
  covariance = sum_g M_g / n), and QDA's svd solver takes each class's
  variances as S**2 / n_g (covariance = M_g / n_g). mvdist's default is the
  unbiased divisor (n - G, n_g - 1); the tests compare sklearn with mvdist's
  Divisor::MaximumLikelihood option.
* LDA (svd, priors=None) explained_variance_ratio_ and scalings_ (the
  discriminant directions, normalized to unit ML pooled within variance).
* Independent numpy/scipy values for mvdist's default (unbiased) divisor:
  squared distances to every centroid through scipy.linalg.cho_factor /
  cho_solve on the pooled covariance sum_g M_g / (n - G) (linear) or each
  group's np.cov (quadratic); posteriors from scipy.special.logsumexp of
  log prior - d2/2 (- log det / 2); typicality of each row under each group
  with scipy.stats.f.sf using the formulas documented in mvdist
  (src/classification/typicality.rs):
    quadratic: F = n_g (n_g - p) d2 / (p (n_g + 1)(n_g - 1)) ~ F(p, n_g - p)
    linear:    F = (nu - p + 1) n_g d2 / (nu p (n_g + 1)) ~ F(p, nu - p + 1),
               nu = n - G.

Floats are written with Python's shortest round-trip repr.
"""

import json
import os
import platform

import numpy as np
import scipy
import scipy.linalg
import scipy.special
import scipy.stats
import sklearn
from sklearn.datasets import load_iris, load_wine
from sklearn.discriminant_analysis import (
    LinearDiscriminantAnalysis,
    QuadraticDiscriminantAnalysis,
)

HERE = os.path.dirname(os.path.abspath(__file__))
CRATE = os.path.dirname(os.path.dirname(HERE))
OUT = os.path.join(CRATE, "tests", "fixtures")
SCRIPT = "tests/reference/make_classification_fixtures.py"

VERSIONS = {
    "python": platform.python_version(),
    "numpy": np.__version__,
    "scipy": scipy.__version__,
    "scikit-learn": sklearn.__version__,
}


def tolist(a):
    return np.asarray(a, dtype=np.float64).tolist()


def unbiased_reference(X, y, G, priors):
    """d2, posteriors and typicality under mvdist's default divisors."""
    n, p = X.shape
    means = np.array([X[y == g].mean(axis=0) for g in range(G)])
    counts = np.array([(y == g).sum() for g in range(G)])
    M = sum(
        (X[y == g] - means[g]).T @ (X[y == g] - means[g]) for g in range(G)
    )
    nu = n - G
    pooled = M / nu
    cf = scipy.linalg.cho_factor(pooled, lower=True)
    d2_lin = np.empty((n, G))
    d2_quad = np.empty((n, G))
    logdet = np.empty(G)
    for g in range(G):
        R = X - means[g]
        d2_lin[:, g] = np.einsum("ij,ij->i", R, scipy.linalg.cho_solve(cf, R.T).T)
        Sg = np.cov(X[y == g], rowvar=False)
        cg = scipy.linalg.cho_factor(Sg, lower=True)
        d2_quad[:, g] = np.einsum("ij,ij->i", R, scipy.linalg.cho_solve(cg, R.T).T)
        logdet[g] = 2.0 * np.log(np.diag(cg[0])).sum()
    lp = np.log(priors)
    s_lin = lp - 0.5 * d2_lin
    s_quad = lp - 0.5 * (d2_quad + logdet)
    post_lin = np.exp(s_lin - scipy.special.logsumexp(s_lin, axis=1)[:, None])
    post_quad = np.exp(s_quad - scipy.special.logsumexp(s_quad, axis=1)[:, None])
    typ_lin = np.empty((n, G))
    typ_quad = np.empty((n, G))
    for g in range(G):
        ng = counts[g]
        f_lin = (nu - p + 1) * ng * d2_lin[:, g] / (nu * p * (ng + 1))
        typ_lin[:, g] = scipy.stats.f.sf(f_lin, p, nu - p + 1)
        f_quad = ng * (ng - p) * d2_quad[:, g] / (p * (ng + 1) * (ng - 1))
        typ_quad[:, g] = scipy.stats.f.sf(f_quad, p, ng - p)
    return {
        "pooled_covariance": tolist(pooled),
        "group_log_determinants": tolist(logdet),
        "linear_d2": tolist(d2_lin),
        "linear_posteriors": tolist(post_lin),
        "linear_typicality": tolist(typ_lin),
        "quadratic_d2": tolist(d2_quad),
        "quadratic_posteriors": tolist(post_quad),
        "quadratic_typicality": tolist(typ_quad),
    }


def make(name, loader, given):
    ds = loader()
    X = np.ascontiguousarray(ds.data, dtype=np.float64)
    y = ds.target.astype(int)
    n, p = X.shape
    G = int(y.max()) + 1
    counts = np.bincount(y)
    # mvdist numbers groups by first appearance; in both datasets the
    # targets appear in order 0, 1, 2, so group numbers equal targets.
    assert [int(v) for v in dict.fromkeys(y.tolist())] == list(range(G))
    prior_sets = {
        "equal": np.full(G, 1.0 / G),
        "proportional": counts / n,
        "given": np.asarray(given, dtype=np.float64),
    }
    sk = {}
    for key, pri in prior_sets.items():
        lda = LinearDiscriminantAnalysis(
            solver="svd", priors=None if key == "proportional" else pri
        ).fit(X, y)
        qda = QuadraticDiscriminantAnalysis(
            reg_param=0.0, priors=None if key == "proportional" else pri
        ).fit(X, y)
        sk[key] = {
            "priors": tolist(pri),
            "lda_posteriors": tolist(lda.predict_proba(X)),
            "lda_predict": lda.predict(X).tolist(),
            "qda_posteriors": tolist(qda.predict_proba(X)),
            "qda_predict": qda.predict(X).tolist(),
        }
    lda = LinearDiscriminantAnalysis(solver="svd").fit(X, y)
    obj = {
        "provenance": {
            "script": SCRIPT,
            "versions": VERSIONS,
            "source": f"sklearn.datasets.{loader.__name__}() bundled with scikit-learn "
            f"{sklearn.__version__}, {n} rows x {p} features, float64; labels = target",
            "method": __doc__,
        },
        "n": n,
        "p": p,
        "data": tolist(X),
        "labels": y.tolist(),
        "label_names": [str(c) for c in ds.target_names],
        "group_counts": counts.tolist(),
        "sklearn": sk,
        "lda_explained_variance_ratio": tolist(lda.explained_variance_ratio_),
        "lda_scalings": tolist(lda.scalings_),
        "unbiased": {
            key: unbiased_reference(X, y, G, pri) for key, pri in prior_sets.items()
        },
    }
    path = os.path.join(OUT, f"classification_{name}.json")
    with open(path, "w") as f:
        json.dump(obj, f, separators=(",", ":"))
    print(f"wrote {path}")


if __name__ == "__main__":
    make("iris", load_iris, [0.5, 0.3, 0.2])
    make("wine", load_wine, [0.2, 0.5, 0.3])
