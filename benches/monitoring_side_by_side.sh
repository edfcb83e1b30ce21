#!/usr/bin/env bash
# Component-based monitoring, mvdist against numpy, in one run: the criterion
# bench `monitoring` and benches/numpy_monitoring.py, then the ratio.
set -euo pipefail
cd "$(dirname "$0")/.."
target="${CARGO_TARGET_DIR:-target}"
cargo bench --bench monitoring -- --noplot component_phase_two
numpy_json=$(env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python3 benches/numpy_monitoring.py)
python3 - "$target" "$numpy_json" <<'PY'
import json, sys
target, numpy = sys.argv[1], json.loads(sys.argv[2])
est = json.load(open(f"{target}/criterion/component_phase_two/1000000x100_k10/new/estimates.json"))
rust_s = est["median"]["point_estimate"] / 1e9
print(f"component Phase II, 1 000 000 x 100, k = 10: mvdist {rust_s*1e3:.1f} ms, "
      f"numpy {numpy['best_s']*1e3:.1f} ms (explicit {numpy['explicit_s']*1e3:.1f}, shortcut {numpy['shortcut_s']*1e3:.1f}) "
      f"-> {numpy['best_s']/rust_s:.1f}x numpy {numpy['numpy']}")
PY
