#!/usr/bin/env bash
# Builds the C interface, compiles the C test program against the
# committed header and the static library with the system C compiler,
# runs it, then runs it again under valgrind (no leaks, no memory errors).
#   bash crates/mvdist-c/tests/c/run.sh            # from the workspace root
# Uses CARGO_TARGET_DIR if set, else ./target.
set -euo pipefail
cd "$(dirname "$0")/../../../.."
cargo build -p mvdist-c
target="$(realpath "${CARGO_TARGET_DIR:-target}")"
cc -std=c11 -Wall -Wextra -Werror -I crates/mvdist-c/include \
  crates/mvdist-c/tests/c/test_mvdist.c "$target/debug/libmvdist_c.a" \
  -lpthread -ldl -lm -o "$target/mvdist_c_test"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
(cd "$work" && "$target/mvdist_c_test")
if command -v valgrind >/dev/null 2>&1; then
  (cd "$work" && valgrind --quiet --leak-check=full --show-leak-kinds=definite,indirect --errors-for-leak-kinds=definite,indirect \
    --error-exitcode=1 "$target/mvdist_c_test")
else
  echo "valgrind not found: the leak check was skipped" >&2
  exit 1
fi
