#!/usr/bin/env python3
"""Time numpy on the problem of the Rust `classification` benchmarks.

Problem: 1 000 000 rows, p = 16, 10 groups (centroids and scatters fitted
on 20 000 labelled rows outside the timing). For every row: the squared
distance to every centroid, the posterior probabilities
(softmax of log prior - d2/2 [- log det/2]) and the most probable group.

Linear rule (one pooled scatter S = L L^T, W = L^-1 and whitened centroids
M = (mu - c) W^T precomputed outside the timing). Formulations tried, the
fastest is reported:
  expand   Z = (X - c) @ W.T;  D = |Z|^2 - 2 Z M^T + |M|^2  (one GEMM for
           the whitening and one for the cross terms)
  diff     D[:, g] = |Z - M_g|^2 per group
  chunked  `expand` on blocks of 65 536 rows (keeps temporaries in cache)
Quadratic rule (each group's W_g = L_g^-1 precomputed):
  loop     D[:, g] = |(X - mu_g) @ W_g.T|^2 per group
  stacked  Z = X @ [W_1^T ... W_G^T] (one GEMM), minus W_g mu_g per block
  chunked  `stacked` on blocks of 65 536 rows
Posteriors, in place on the score matrix: s = logprior - D/2; s -= max;
np.exp(s, out=s); s /= s.sum(1); groups = argmax.
Typicality (the `_typicality` operations): additionally scipy.special.fdtrc
of each row's scaled distance to its assigned group (the F reference).

Each timing is the best of 5 runs (time.perf_counter). Run without
OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE in the environment:

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/numpy_classification.py --json target/numpy_classification.json

Versions used for the README figures: numpy 2.4.6, scipy 1.17.1.
"""

import argparse
import json
import platform
import time

import numpy as np
import scipy
import scipy.special

N, P, G, TRAIN = 1_000_000, 16, 10, 20_000
CHUNK = 65_536
SEED = 20240601


def labelled_rows(n, rng, centres, mixes):
    labels = np.arange(n) % G
    Z = rng.standard_normal((n, P))
    X = np.empty((n, P))
    for g in range(G):
        idx = labels == g
        X[idx] = centres[g] + Z[idx] @ mixes[g].T
    return np.ascontiguousarray(X), labels


def best_of(fn, repeats):
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def posteriors_in_place(D, offsets):
    s = np.multiply(D, -0.5)
    s += offsets
    groups = s.argmax(axis=1)
    s -= s.max(axis=1)[:, None]
    np.exp(s, out=s)
    s /= s.sum(axis=1)[:, None]
    return s, groups


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--json")
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args()

    rng = np.random.default_rng(SEED)
    centres = 3.0 * rng.standard_normal((G, P))
    mixes = []
    for _ in range(G):
        A = np.tril(0.3 * rng.standard_normal((P, P)), -1)
        A[np.diag_indices(P)] = 1.0 + rng.random(P)
        mixes.append(A)
    T, y = labelled_rows(TRAIN, rng, centres, mixes)
    X, _ = labelled_rows(N, rng, centres, mixes)

    counts = np.bincount(y, minlength=G)
    mus = np.array([T[y == g].mean(axis=0) for g in range(G)])
    logprior = np.log(counts / counts.sum())
    # Linear rule.
    M_within = sum((T[y == g] - mus[g]).T @ (T[y == g] - mus[g]) for g in range(G))
    S = M_within / (TRAIN - G)
    W = np.linalg.inv(np.linalg.cholesky(S))
    c = counts @ mus / counts.sum()
    Mw = (mus - c) @ W.T
    Mn = (Mw * Mw).sum(axis=1)
    Wt = np.ascontiguousarray(W.T)
    Mt2 = np.ascontiguousarray(-2.0 * Mw.T)
    # Quadratic rule.
    Ws, logdets = [], []
    for g in range(G):
        Sg = np.cov(T[y == g], rowvar=False)
        Lg = np.linalg.cholesky(Sg)
        Ws.append(np.linalg.inv(Lg))
        logdets.append(2.0 * np.log(np.diag(Lg)).sum())
    q_offsets = logprior - 0.5 * np.array(logdets)
    Wstack = np.ascontiguousarray(np.hstack([w.T for w in Ws]))  # P x (G P)
    shifts = np.concatenate([w @ m for w, m in zip(Ws, mus)])  # G P

    def lin_expand(Xb):
        Z = Xb - c
        Z = Z @ Wt
        D = Z @ Mt2
        D += np.einsum("ij,ij->i", Z, Z)[:, None]
        D += Mn
        return D

    def lin_diff(Xb):
        Z = (Xb - c) @ Wt
        D = np.empty((Xb.shape[0], G))
        for g in range(G):
            U = Z - Mw[g]
            D[:, g] = np.einsum("ij,ij->i", U, U)
        return D

    def quad_loop(Xb):
        D = np.empty((Xb.shape[0], G))
        for g in range(G):
            Z = (Xb - mus[g]) @ Ws[g].T
            D[:, g] = np.einsum("ij,ij->i", Z, Z)
        return D

    def quad_stacked(Xb):
        Z = Xb @ Wstack
        Z -= shifts
        Z *= Z
        return Z.reshape(Xb.shape[0], G, P).sum(axis=2)

    def whole(dist, offsets):
        def run():
            D = dist(X)
            return D, posteriors_in_place(D, offsets)
        return run

    def chunked(dist, offsets):
        def run():
            D = np.empty((N, G))
            post = np.empty((N, G))
            groups = np.empty(N, dtype=np.int64)
            for s in range(0, N, CHUNK):
                Db = dist(X[s:s + CHUNK])
                D[s:s + CHUNK] = Db
                pb, gb = posteriors_in_place(Db, offsets)
                post[s:s + CHUNK] = pb
                groups[s:s + CHUNK] = gb
            return D, post, groups
        return run

    results = {}
    variants = {
        "linear": {
            "expand": whole(lin_expand, logprior),
            "diff": whole(lin_diff, logprior),
            "chunked": chunked(lin_expand, logprior),
        },
        "quadratic": {
            "loop": whole(quad_loop, q_offsets),
            "stacked": whole(quad_stacked, q_offsets),
            "chunked": chunked(quad_stacked, q_offsets),
        },
    }
    # Agreement between formulations (posteriors), as a sanity check.
    for rule, vs in variants.items():
        times = {k: best_of(f, args.repeats) for k, f in vs.items()}
        best = min(times, key=times.get)
        results[f"classify_predict/{rule}"] = {"seconds": times[best], "formulation": best, "all": times}
        print(f"{rule}: " + ", ".join(f"{k} {v * 1e3:.1f} ms" for k, v in times.items()) + f" -> best {best}")

    # Typicality on top of the best formulation.
    nu = TRAIN - G
    for rule in ["linear", "quadratic"]:
        best = results[f"classify_predict/{rule}"]["formulation"]
        fn = variants[rule][best]

        def with_typicality(fn=fn, rule=rule):
            out = fn()
            D = out[0]
            groups = out[-1] if len(out) == 3 else out[1][1]
            d = D[np.arange(N), groups]
            ng = counts[groups].astype(np.float64)
            if rule == "linear":
                f = (nu - P + 1) * ng * d / (nu * P * (ng + 1))
                return scipy.special.fdtrc(P, nu - P + 1, f)
            f = ng * (ng - P) * d / (P * (ng + 1) * (ng - 1))
            return scipy.special.fdtrc(P, ng - P, f)

        t = best_of(with_typicality, args.repeats)
        results[f"classify_predict_typicality/{rule}"] = {"seconds": t, "formulation": best + " + fdtrc"}
        print(f"{rule} with typicality: {t * 1e3:.1f} ms")

    meta = {"numpy": np.__version__, "scipy": scipy.__version__, "python": platform.python_version()}
    try:
        import threadpoolctl

        meta["blas"] = [
            {k: p.get(k) for k in ("internal_api", "version", "num_threads", "architecture")}
            for p in threadpoolctl.threadpool_info()
            if p.get("user_api") == "blas"
        ]
    except ImportError:
        pass
    if args.json:
        with open(args.json, "w") as f:
            json.dump({"meta": meta, "results": results}, f, indent=1)


if __name__ == "__main__":
    main()
