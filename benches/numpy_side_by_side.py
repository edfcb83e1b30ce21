#!/usr/bin/env python3
"""Time numpy on the same problem sizes as the Rust `scoring` benchmarks.

Operations (same names as the criterion groups):
  score_batch  squared Mahalanobis distance of every row of X (n x p) to mu,
               with the inverse covariance precomputed outside the timing:
                   d2 = ((X - mu) @ Sinv * (X - mu)).sum(1)
  fit_batch    covariance estimate: np.cov(X, rowvar=False)
  score_one    one row at p = 16: d = x - mu; d @ Sinv @ d (fastest of a few
               equivalent numpy spellings), per call in ns

Batch timings are the best of 5 runs (time.perf_counter). score_one is timed
in 100 batches of 1000 calls (100000 calls); the reported figure is the
median over the batches of the per-call time (batching keeps the timer's own
overhead out of a ~1 us measurement).

Fair benchmarking: some machines export OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE,
which can make OpenBLAS pick slower kernels. This script does not touch them;
run it with them removed from the environment:

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/numpy_side_by_side.py

Usage: numpy_side_by_side.py [--json PATH] [--repeats N]
"""

import argparse
import json
import os
import platform
import statistics
import sys
import time

import numpy as np

SIZES = [(1_000_000, 8), (1_000_000, 32), (200_000, 128)]
ONE_P = 16
SEED = 20240601


def correlated_normal(n, p, seed):
    """X = Z L^T + m with Z standard normal and L the Cholesky factor of the
    AR(1)-type correlation 0.6^|i-j| scaled by column standard deviations
    1 + (j mod 3); column means m_j = j. float64, C order."""
    rng = np.random.default_rng(seed)
    idx = np.arange(p)
    corr = 0.6 ** np.abs(idx[:, None] - idx[None, :])
    sd = 1.0 + (idx % 3)
    cov = corr * sd[:, None] * sd[None, :]
    L = np.linalg.cholesky(cov)
    X = rng.standard_normal((n, p)) @ L.T
    X += idx.astype(np.float64)
    return np.ascontiguousarray(X, dtype=np.float64)


def best_of(fn, repeats):
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        t1 = time.perf_counter()
        best = min(best, t1 - t0)
    return best


def blas_info():
    info = {"numpy": np.__version__, "python": platform.python_version()}
    try:
        import threadpoolctl

        pools = threadpoolctl.threadpool_info()
        # prefer the BLAS that numpy itself loads
        blas = [p for p in pools if p.get("user_api") == "blas"]
        mine = [p for p in blas if "numpy" in (p.get("filepath") or "")] or blas
        info["libraries"] = [
            {
                "internal_api": p.get("internal_api"),
                "num_threads": p.get("num_threads"),
                "architecture": p.get("architecture"),
                "version": p.get("version"),
                "file": os.path.basename(p.get("filepath") or ""),
            }
            for p in mine
        ]
    except ImportError:
        info["libraries"] = "threadpoolctl not installed"
    info["env"] = {k: os.environ.get(k) for k in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE",
                                                   "OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS")}
    info["cpu_count"] = os.cpu_count()
    return info


def fmt_time(s):
    if s < 1e-6:
        return f"{s * 1e9:8.1f} ns"
    if s < 1e-3:
        return f"{s * 1e6:8.2f} us"
    if s < 1:
        return f"{s * 1e3:8.2f} ms"
    return f"{s:8.3f} s "


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--json", metavar="PATH", help="also write the results as JSON to PATH")
    ap.add_argument("--repeats", type=int, default=5, help="best-of repeats for batch timings (default 5)")
    args = ap.parse_args(argv)

    info = blas_info()
    print(f"numpy {info['numpy']} on python {info['python']}, {info['cpu_count']} CPUs")
    libs = info["libraries"]
    if isinstance(libs, list):
        for lib in libs:
            print(f"BLAS: {lib['internal_api']} {lib['version']} threads={lib['num_threads']} "
                  f"architecture={lib['architecture']} ({lib['file']})")
    else:
        print(f"BLAS: {libs}")
    for k, v in info["env"].items():
        print(f"  {k}={v if v is not None else '(unset)'}")
    if info["env"]["OPENBLAS_CORETYPE"] or info["env"]["OPENBLAS_L2_SIZE"]:
        print("  warning: OPENBLAS_CORETYPE/OPENBLAS_L2_SIZE are set; for a fair comparison run with\n"
              "  env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/numpy_side_by_side.py")
    print()

    score_batch = {}
    fit_batch = {}
    rows = []
    for n, p in SIZES:
        key = f"{n}x{p}"
        X = correlated_normal(n, p, SEED + p)
        mu = X.mean(0)
        S = np.cov(X, rowvar=False)
        Sinv = np.linalg.inv(S)

        def score():
            D = X - mu
            return (D @ Sinv * D).sum(1)

        # one untimed warm-up each, then best of N
        d2 = score()
        assert d2.shape == (n,) and np.isfinite(d2).all()
        t_score = best_of(score, args.repeats)
        np.cov(X, rowvar=False)
        t_fit = best_of(lambda: np.cov(X, rowvar=False), args.repeats)
        score_batch[key] = t_score
        fit_batch[key] = t_fit
        rows.append(("score_batch", key, t_score, n))
        rows.append(("fit_batch", key, t_fit, n))
        del X, d2

    # single row at p = 16
    X1 = correlated_normal(10_000, ONE_P, SEED + ONE_P)
    mu1 = X1.mean(0)
    Sinv1 = np.linalg.inv(np.cov(X1, rowvar=False))
    x = X1[0].copy()
    variants = {
        "d @ Sinv @ d": lambda: (lambda d: d @ Sinv1 @ d)(x - mu1),
        "d.dot(Sinv.dot(d))": lambda: (lambda d: d.dot(Sinv1.dot(d)))(x - mu1),
        "np.dot(np.dot(d, Sinv), d)": lambda: (lambda d: np.dot(np.dot(d, Sinv1), d))(x - mu1),
    }
    batches, per_batch = 100, 1000
    one = {}
    for name, fn in variants.items():
        for _ in range(2000):  # warm-up
            fn()
        per_call = []
        for _ in range(batches):
            t0 = time.perf_counter_ns()
            for _ in range(per_batch):
                fn()
            per_call.append((time.perf_counter_ns() - t0) / per_batch)
        one[name] = statistics.median(per_call)
    best_name = min(one, key=one.get)
    score_one_ns = {str(ONE_P): one[best_name]}

    print(f"{'operation':<12} {'size':>12} {'numpy time':>12} {'rows/s':>14}")
    print("-" * 53)
    for op, key, t, n in rows:
        print(f"{op:<12} {key:>12} {fmt_time(t):>12} {n / t:14.3e}")
    print(f"{'score_one':<12} {'p=' + str(ONE_P):>12} {fmt_time(one[best_name] * 1e-9):>12} "
          f"{1e9 / one[best_name]:14.3e}   [{best_name}]")
    print()
    print("score_one variants (median ns per call over 100 x 1000 calls):")
    for name, ns in sorted(one.items(), key=lambda kv: kv[1]):
        print(f"  {ns:9.1f} ns  {name}")

    if args.json:
        out = {
            "score_batch": score_batch,
            "fit_batch": fit_batch,
            "score_one_ns": score_one_ns,
            "score_one_variants_ns": one,
            "score_one_formulation": best_name,
            "blas": info,
            "timing": {"batch": f"best of {args.repeats}, time.perf_counter, seconds",
                       "score_one": f"median over {batches} batches of {per_batch} calls, ns per call"},
        }
        d = os.path.dirname(os.path.abspath(args.json))
        os.makedirs(d, exist_ok=True)
        with open(args.json, "w") as f:
            json.dump(out, f, indent=2)
            f.write("\n")
        print(f"\nwrote {args.json}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
