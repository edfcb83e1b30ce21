#!/usr/bin/env bash
# Run the Rust scoring benchmarks and the numpy equivalents in one go, then
# print a side-by-side markdown table. Run from anywhere; works in the crate root.
#
# numpy is run without OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE, which some
# machines export and which can make OpenBLAS choose slower kernels.
set -euo pipefail
cd "$(dirname "$0")/.."

cargo bench --bench scoring -- --noplot
env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/numpy_side_by_side.py --json target/numpy_side_by_side.json
python3 benches/compare.py
