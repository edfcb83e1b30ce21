#!/usr/bin/env python3
"""Time scikit-learn's MinCovDet, LedoitWolf and OAS on the data sets written
by the `robust` criterion bench, and print a side-by-side table with mvdist.

Run after the criterion bench, in the same session:

    cargo bench --bench robust -- --noplot
    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/robust_side_by_side.py

Data: target/robust_bench/NxP.f64 (row-major little-endian float64), 20% of
the rows shifted (see benches/robust.rs). scikit-learn gets the same subset
size h as mvdist (support_fraction = (h + 0.5)/n, so that its
int(fraction * n) equals h) and random_state=0. Its raw objective is
log det(raw_covariance_) (numpy.linalg.slogdet); mvdist's is read from
target/robust_bench/mcd_objective.json. Timings: best of `--repeats` runs for
MinCovDet (default 2) and of 5 runs for LedoitWolf / OAS (time.perf_counter);
mvdist: criterion's mean estimate (target/criterion/.../new/estimates.json).
"""

import argparse
import json
import os
import platform
import time

import numpy as np
import sklearn
from sklearn.covariance import OAS, LedoitWolf, MinCovDet

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
TARGET = os.environ.get("CARGO_TARGET_DIR", os.path.join(ROOT, "target"))
DATA = os.path.join(TARGET, "robust_bench")
CRITERION = os.path.join(TARGET, "criterion")


def load(n, p):
    x = np.fromfile(os.path.join(DATA, f"{n}x{p}.f64"), dtype="<f8")
    return np.ascontiguousarray(x.reshape(n, p))


def best_of(fn, repeats):
    best, out = float("inf"), None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def criterion_seconds(group, ident):
    path = os.path.join(CRITERION, group, ident, "new", "estimates.json")
    with open(path) as f:
        return json.load(f)["mean"]["point_estimate"] * 1e-9


def fmt(s):
    return f"{s * 1e3:.1f} ms" if s < 10 else f"{s:.2f} s"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeats", type=int, default=2)
    ap.add_argument("--json", default=os.path.join(TARGET, "robust_side_by_side.json"))
    args = ap.parse_args()
    with open(os.path.join(DATA, "mcd_objective.json")) as f:
        ours = json.load(f)
    rows = []
    for n, p in [(10_000, 10), (50_000, 20)]:
        x = load(n, p)
        key = f"{n}x{p}"
        h = ours[key]["subset_size"]
        t, m = best_of(
            lambda: MinCovDet(support_fraction=(h + 0.5) / n, random_state=0).fit(x),
            args.repeats,
        )
        assert int(m.raw_support_.sum()) == h
        sk_obj = float(np.linalg.slogdet(m.raw_covariance_)[1])
        mine = criterion_seconds("mcd", key)
        rows.append({
            "operation": "MCD (FastMCD, reweighted)", "size": key, "mvdist_s": mine,
            "sklearn_s": t, "speedup": t / mine,
            "mvdist_raw_log_det": ours[key]["raw_log_det"], "sklearn_raw_log_det": sk_obj,
        })
    n, p = 100_000, 50
    x = load(n, p)
    for name, est, ident in [("Ledoit-Wolf", LedoitWolf, "ledoit_wolf"), ("OAS", OAS, "oas")]:
        t, _ = best_of(lambda: est().fit(x), 5)
        mine = criterion_seconds("shrinkage", f"{ident}_{n}x{p}")
        rows.append({"operation": name, "size": f"{n}x{p}", "mvdist_s": mine,
                     "sklearn_s": t, "speedup": t / mine})
    print(f"scikit-learn {sklearn.__version__}, numpy {np.__version__}, python {platform.python_version()}")
    print()
    print("| operation | size (n × p) | mvdist | scikit-learn | speed-up | raw ln det (mvdist / scikit-learn) |")
    print("|---|---|---:|---:|---:|---|")
    for r in rows:
        det = ""
        if "mvdist_raw_log_det" in r:
            det = f"{r['mvdist_raw_log_det']:.7f} / {r['sklearn_raw_log_det']:.7f}"
        print(f"| {r['operation']} | {r['size'].replace('x', ' × ')} | {fmt(r['mvdist_s'])} | "
              f"{fmt(r['sklearn_s'])} | {r['speedup']:.1f}× | {det} |")
    with open(args.json, "w") as f:
        json.dump({"rows": rows, "sklearn": sklearn.__version__, "numpy": np.__version__}, f, indent=1)


if __name__ == "__main__":
    main()
