#!/usr/bin/env python3
"""Time numpy on the statistics of the Rust `monitoring` bench: Phase II T^2 on
k = 10 principal components and the squared prediction error Q of
1 000 000 rows x 100 variables, the component model (mean, standard
deviations, loadings P, eigenvalues) fitted outside the timing on 20 000 rows.

Two numpy spellings, best of 5 runs each; the faster is reported:
  explicit  C = (X - mu) / sd; T = C @ P; t2 = (T**2 / lam).sum(1);
            E = C - T @ P.T; q = (E**2).sum(1)
  shortcut  C as above; T = C @ P; t2 as above;
            q = einsum('ij,ij->i', C, C) - einsum('ij,ij->i', T, T)
            (cheaper, but loses digits when Q is small against |C|^2)

Run without OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE in the environment:
    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/numpy_monitoring.py
"""
import json, sys, time
import numpy as np

N, P, K, M = 1_000_000, 100, 10, 20_000


def rows(n, p, seed):
    rng = np.random.default_rng(seed)
    a = np.tril(0.5 * rng.standard_normal((p, p)), -1) + np.diag(1 + rng.random(p))
    return np.ascontiguousarray(10.0 + rng.standard_normal((n, p)) @ a.T)


def best_of(fn, repeats=5):
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


x = rows(N, P, 20261204)
ref = x[:M]
mu, sd = ref.mean(0), ref.std(0, ddof=1)
w, v = np.linalg.eigh(np.corrcoef(ref, rowvar=False))
lam, p = w[::-1][:K], np.ascontiguousarray(v[:, ::-1][:, :K])


def explicit():
    c = (x - mu) / sd
    t = c @ p
    t2 = (t ** 2 / lam).sum(1)
    e = c - t @ p.T
    return t2, (e ** 2).sum(1)


def shortcut():
    c = (x - mu) / sd
    t = c @ p
    t2 = (t ** 2 / lam).sum(1)
    return t2, np.einsum("ij,ij->i", c, c) - np.einsum("ij,ij->i", t, t)


def fit():
    r_mu, r_sd = ref.mean(0), ref.std(0, ddof=1)
    np.linalg.eigh(np.corrcoef(ref, rowvar=False))


res = {
    "explicit_s": best_of(explicit),
    "shortcut_s": best_of(shortcut),
    "fit_s": best_of(fit),
    "numpy": np.__version__,
}
res["best_s"] = min(res["explicit_s"], res["shortcut_s"])
json.dump(res, sys.stdout)
print()
