#!/usr/bin/env bash
# Run the Rust classification benchmarks and the numpy equivalents in one
# go, then print a side-by-side markdown table. Run from anywhere.
#
# numpy is run without OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE, which some
# machines export and which can make OpenBLAS choose slower kernels.
set -euo pipefail
cd "$(dirname "$0")/.."

cargo bench --bench classification -- --noplot
target="${CARGO_TARGET_DIR:-target}"
env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/numpy_classification.py --json "$target/numpy_classification.json"
python3 benches/classification_compare.py
