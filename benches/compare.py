#!/usr/bin/env python3
"""Print a markdown table comparing the Rust `scoring` benchmarks with numpy.

Inputs (paths relative to the crate root unless given explicitly):
  criterion results  <target>/criterion/<group>/<id>/new/estimates.json
                     (field mean.point_estimate, nanoseconds), for groups
                     score_batch and fit_batch with ids 1000000x8, 1000000x32,
                     200000x128, and group score_one with id 16
  numpy results      <target>/numpy_side_by_side.json written by
                     benches/numpy_side_by_side.py --json

<target> is $CARGO_TARGET_DIR if set, else ./target. Missing files are
reported and shown as n/a; the script still exits 0 so that a partial run of
benches/side_by_side.sh shows what it has.

Usage: compare.py [--criterion-dir DIR] [--numpy-json PATH]
"""

import argparse
import glob
import json
import os
import sys

CRATE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
BATCH_IDS = ["1000000x8", "1000000x32", "200000x128"]
ROWS = ([("score_batch", i) for i in BATCH_IDS]
        + [("fit_batch", i) for i in BATCH_IDS]
        + [("score_one", "16")])


def find_estimates(criterion_dir, group, bench_id):
    """Return the estimates.json path for group/id, or None.

    The expected layout is <group>/<id>/new/estimates.json; as a fallback a
    nested <group>/<function>/<id>/new/estimates.json (criterion's layout for
    BenchmarkId::new(function, parameter)) is accepted when it is unique."""
    direct = os.path.join(criterion_dir, group, bench_id, "new", "estimates.json")
    if os.path.isfile(direct):
        return direct
    hits = sorted(glob.glob(os.path.join(criterion_dir, group, "*", bench_id, "new", "estimates.json")))
    if len(hits) == 1:
        return hits[0]
    return None


def read_criterion_seconds(path):
    with open(path) as f:
        est = json.load(f)
    return float(est["mean"]["point_estimate"]) * 1e-9


def numpy_seconds(data, group, bench_id):
    if data is None:
        return None
    if group == "score_one":
        v = data.get("score_one_ns", {}).get(bench_id)
        return None if v is None else float(v) * 1e-9
    v = data.get(group, {}).get(bench_id)
    return None if v is None else float(v)


def fmt(s):
    if s is None:
        return "n/a"
    if s < 1e-6:
        return f"{s * 1e9:.1f} ns"
    if s < 1e-3:
        return f"{s * 1e6:.2f} µs"
    if s < 1:
        return f"{s * 1e3:.2f} ms"
    return f"{s:.3f} s"


def share(group, bench_id, seconds, limits):
    """The measured rate as a fraction of the binding machine limit: bytes
    read against the parallel read bandwidth, and flops (p(p+1) per row for
    the triangular kernels) against the FMA peak; the larger fraction is the
    binding one."""
    if not seconds or not limits:
        return "n/a"
    if group == "score_one":
        return "latency of one call (no throughput limit applies)"
    else:
        n, p = (int(v) for v in bench_id.split("x"))
    bw = limits["read_bandwidth_bytes_per_s"]
    peak = limits["fma_peak_flops"]
    bytes_frac = n * p * 8 / seconds / bw
    flops_frac = n * p * (p + 1) / seconds / peak
    if bytes_frac >= flops_frac:
        return f"{100 * bytes_frac:.0f}% of read bandwidth ({bw / 1e9:.1f} GB/s)"
    return f"{100 * flops_frac:.0f}% of FMA peak ({peak / 1e9:.0f} GFLOP/s)"


def main(argv=None):
    target = os.environ.get("CARGO_TARGET_DIR") or os.path.join(CRATE, "target")
    ap = argparse.ArgumentParser(description="Compare mvdist criterion results with numpy timings.")
    ap.add_argument("--criterion-dir", default=os.path.join(target, "criterion"))
    ap.add_argument("--numpy-json", default=os.path.join(target, "numpy_side_by_side.json"))
    args = ap.parse_args(argv)

    problems = []
    numpy_data = None
    if os.path.isfile(args.numpy_json):
        try:
            with open(args.numpy_json) as f:
                numpy_data = json.load(f)
        except (OSError, ValueError) as e:
            problems.append(f"cannot read numpy results {args.numpy_json}: {e}")
    else:
        problems.append(f"numpy results not found: {args.numpy_json} "
                        "(run: env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE "
                        "python3 benches/numpy_side_by_side.py --json target/numpy_side_by_side.json)")
    if not os.path.isdir(args.criterion_dir):
        problems.append(f"criterion results directory not found: {args.criterion_dir} "
                        "(run: cargo bench --bench scoring -- --noplot)")

    limits = None
    limits_path = os.path.join(os.path.dirname(args.criterion_dir), "machine_limits.json")
    if os.path.isfile(limits_path):
        try:
            with open(limits_path) as f:
                limits = json.load(f)
        except (OSError, ValueError) as e:
            problems.append(f"cannot read {limits_path}: {e}")
    else:
        problems.append(f"machine limits not found: {limits_path} (written by the scoring bench)")

    lines = ["| operation | size | mvdist | numpy | speed-up (numpy/mvdist) | mvdist share of machine limit |",
             "|---|---|---:|---:|---:|---|"]
    for group, bench_id in ROWS:
        rust = None
        if os.path.isdir(args.criterion_dir):
            path = find_estimates(args.criterion_dir, group, bench_id)
            if path is None:
                problems.append(f"missing criterion estimate: {group}/{bench_id}/new/estimates.json "
                                f"under {args.criterion_dir}")
            else:
                try:
                    rust = read_criterion_seconds(path)
                except (OSError, ValueError, KeyError, TypeError) as e:
                    problems.append(f"cannot read {path}: {e}")
        npy = numpy_seconds(numpy_data, group, bench_id)
        if numpy_data is not None and npy is None:
            problems.append(f"numpy results have no entry for {group}/{bench_id}")
        ratio = f"{npy / rust:.2f}x" if (rust and npy) else "n/a"
        size = f"p={bench_id}" if group == "score_one" else bench_id
        lines.append(f"| {group} | {size} | {fmt(rust)} | {fmt(npy)} | {ratio} | {share(group, bench_id, rust, limits)} |")

    print("\n".join(lines))
    if numpy_data is not None:
        blas = numpy_data.get("blas", {})
        libs = blas.get("libraries")
        if isinstance(libs, list) and libs:
            lib = libs[0]
            print(f"\nnumpy {blas.get('numpy')}: {lib.get('internal_api')} {lib.get('version')}, "
                  f"{lib.get('num_threads')} threads, {lib.get('architecture')}; "
                  f"score_one formulation: {numpy_data.get('score_one_formulation', 'd @ Sinv @ d')}")
        env = blas.get("env", {})
        set_vars = {k: v for k, v in env.items() if k.startswith("OPENBLAS_") and v}
        if set_vars.get("OPENBLAS_CORETYPE") or set_vars.get("OPENBLAS_L2_SIZE"):
            print(f"warning: numpy ran with {set_vars}; its timings may be pessimistic")
    print("\nmvdist: criterion mean; numpy: best of 5 (batch), median per call (score_one).")
    if problems:
        print("\nnote: some results are missing:", file=sys.stderr)
        for p in problems:
            print(f"  - {p}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
