#!/usr/bin/env bash
# Sets everything up and runs the whole test suite: installs missing Debian packages,
# builds with warnings as errors, runs every CTest test (unit, reference checks against
# scikit-learn/SciPy, end-to-end tests that drive the real binaries).
# Usage: tools/test.sh            (from anywhere; builds into build/ci beside the sources)
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${SESTON_BUILD_DIR:-$root/build/ci}"
jobs="${SESTON_JOBS:-$(nproc)}"

"$root/tools/install-deps.sh" --test

echo "== configure ($build)"
cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DSESTON_WERROR=ON >/dev/null
echo "== build"
cmake --build "$build" -j "$jobs"
echo "== test"
ctest --test-dir "$build" --output-on-failure -j "$jobs" --timeout 900
