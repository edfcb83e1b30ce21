#!/usr/bin/env python3
"""Print a markdown table comparing the Rust `classification` benchmarks
with numpy (benches/numpy_classification.py --json).

Inputs: <target>/criterion/<group>/<rule>/new/estimates.json (mean, ns) and
<target>/numpy_classification.json; <target> is $CARGO_TARGET_DIR or
./target. Missing results are shown as n/a.
"""

import json
import os

CRATE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
TARGET = os.environ.get("CARGO_TARGET_DIR", os.path.join(CRATE, "target"))
ROWS = [
    ("classify_predict", "linear", "predict, linear rule", "1 000 000 × 16, 10 groups"),
    ("classify_predict", "quadratic", "predict, quadratic rule", "1 000 000 × 16, 10 groups"),
    ("classify_predict_typicality", "linear", "predict + typicality, linear", "1 000 000 × 16, 10 groups"),
    ("classify_predict_typicality", "quadratic", "predict + typicality, quadratic", "1 000 000 × 16, 10 groups"),
    ("classify_leave_one_out", "linear", "leave-one-out (fit included), linear", "100 000 × 16, 10 groups"),
    ("classify_leave_one_out", "quadratic", "leave-one-out (fit included), quadratic", "100 000 × 16, 10 groups"),
]


def criterion_seconds(group, bench):
    path = os.path.join(TARGET, "criterion", group, bench, "new", "estimates.json")
    try:
        with open(path) as f:
            return json.load(f)["mean"]["point_estimate"] * 1e-9
    except OSError:
        return None


def fmt(t):
    if t is None:
        return "n/a"
    return f"{t * 1e3:.1f} ms" if t < 10 else f"{t:.2f} s"


def main():
    try:
        with open(os.path.join(TARGET, "numpy_classification.json")) as f:
            numpy = json.load(f)["results"]
    except OSError:
        numpy = {}
    print("| operation | size | mvdist | numpy (formulation) | speed-up |")
    print("|---|---|---:|---:|---:|")
    for group, bench, name, size in ROWS:
        ours = criterion_seconds(group, bench)
        theirs = numpy.get(f"{group}/{bench}")
        if theirs is None:
            print(f"| {name} | {size} | {fmt(ours)} | — | — |")
            continue
        ratio = "n/a" if ours is None else f"{theirs['seconds'] / ours:.1f}×"
        print(f"| {name} | {size} | {fmt(ours)} | {fmt(theirs['seconds'])} ({theirs['formulation']}) | {ratio} |")


if __name__ == "__main__":
    main()
