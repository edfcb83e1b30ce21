"""Side-by-side speed of mvdist and numpy/scipy, measured in one run.

    python crates/mvdist-py/bench/compare.py [--rows 1000000] [--cols 8]

Scores invented standard-normal rows (fixed seed) with a model fitted to
them and prints, for squared distances and for squared distances with
p-values, the best of 15 repeats (after one warm-up call) of mvdist and of each numpy
formulation, and the ratio of numpy's best formulation to mvdist. Then the
time of one single-row call from Python. Ratios, not absolute times, are
the result: both sides run on the same machine in the same process.
"""

import argparse
import os
import time
import timeit

import numpy as np
from scipy import linalg, stats

import mvdist


def best(f, repeats):
    f()  # warm-up: first-touch of buffers, thread start-up, caches
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = f()
        times.append(time.perf_counter() - t0)
    return min(times), out


def whitened_in_place(x, w, shift):
    z = x @ w
    z -= shift
    np.square(z, out=z)
    return z @ np.ones(z.shape[1])


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--rows", type=int, default=1_000_000)
    ap.add_argument("--cols", type=int, default=8)
    ap.add_argument("--repeats", type=int, default=15)
    args = ap.parse_args()
    n, p, r = args.rows, args.cols, args.repeats
    x = np.random.default_rng(20261203).normal(size=(n, p))
    model = mvdist.DistanceModel.fit(x)
    mu, cov = model.location, model.covariance
    fit_n = model.sample_size
    vi = np.linalg.inv(cov)
    chol = np.linalg.cholesky(cov)
    w = linalg.solve_triangular(chol, np.eye(p), lower=True).T  # x @ w whitens
    print(f"rows {n} x {p}, numpy {np.__version__}, threads: mvdist {mvdist.thread_count()}, "
          f"cores {os.cpu_count()}")

    formulations = {
        "einsum with the inverse": lambda: np.einsum("ij,jk,ik->i", x - mu, vi, x - mu, optimize=True),
        "centred @ inverse, row sums": lambda: ((x - mu) @ vi * (x - mu)).sum(axis=1),
        "triangular solve": lambda: (linalg.solve_triangular(chol, (x - mu).T, lower=True) ** 2).sum(axis=0),
        "whitening product": lambda: np.einsum("ij,ij->i", *(2 * [x @ w - mu @ w])),
        "whitening product, in place": lambda: whitened_in_place(x, w, mu @ w),
    }
    t_ours, ours = best(lambda: model.squared_distances(x), r)
    print(f"\nsquared distances\n  mvdist                          {t_ours * 1e3:8.2f} ms")
    fastest = None
    for name, f in formulations.items():
        t, d = best(f, r)
        np.testing.assert_allclose(d, ours, rtol=1e-9)
        print(f"  numpy: {name:<25} {t * 1e3:8.2f} ms")
        fastest = t if fastest is None else min(fastest, t)
    print(f"  numpy's best / mvdist: {fastest / t_ours:.1f}x")

    def numpy_scores():
        d = np.einsum("ij,ij->i", *(2 * [x @ w - mu @ w]))
        f = fit_n * (fit_n - p) * d / (p * (fit_n - 1) * (fit_n + 1))
        return d, stats.f.sf(f, p, fit_n - p)

    t_ours, s = best(lambda: model.score(x, origin="new"), r)
    t_np, (d, pv) = best(numpy_scores, r)
    np.testing.assert_allclose(pv, s.p_values, rtol=1e-7, atol=1e-300)
    print(f"\nsquared distances and F p-values\n  mvdist {t_ours * 1e3:8.2f} ms   numpy + scipy "
          f"{t_np * 1e3:8.2f} ms   ratio {t_np / t_ours:.1f}x")

    row = np.ascontiguousarray(x[0])
    scorer = model.scorer(0.001)
    calls = 200_000
    for label, stmt in [
        ("Scorer.flag_row(row)", lambda: scorer.flag_row(row)),
        ("Scorer.score_row(row)", lambda: scorer.score_row(row)),
        ("DistanceModel.squared_distance(row)", lambda: model.squared_distance(row)),
    ]:
        t = min(timeit.repeat(stmt, number=calls, repeat=5)) / calls
        print(f"\none row, {label:<36} {t * 1e9:7.0f} ns per call (including the Python call)", end="")
    empty = min(timeit.repeat(lambda: None, number=calls, repeat=5)) / calls
    print(f"\none row, an empty Python lambda (the loop's own cost)  {empty * 1e9:7.0f} ns\n")


if __name__ == "__main__":
    main()
