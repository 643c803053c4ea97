#!/usr/bin/env bash
# Sets everything up and runs the whole test suite: installs missing Debian packages,
# builds with warnings as errors, runs every CTest test (unit, reference checks against
# scikit-learn/SciPy, end-to-end tests that drive the real binaries, the kill -9 crash
# test), then the unit tests again under AddressSanitizer + UndefinedBehaviorSanitizer,
# then each libFuzzer target for a bounded time. Any failure, sanitiser report or fuzzing
# crash fails the command; a crash input is copied to tests/fuzz/crashes/<target>/.
# Usage: tools/test.sh            (from anywhere; builds into build/ci, build/asan and
#                                  build/fuzz beside the sources)
# Knobs: SESTON_JOBS (default nproc), SESTON_FUZZ_SECONDS per target (default 45; 0 skips
#        fuzzing), SESTON_SKIP_SANITIZE=1 skips the sanitiser build.
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${SESTON_BUILD_DIR:-$root/build/ci}"
asan_build="$root/build/asan"
fuzz_build="$root/build/fuzz"
jobs="${SESTON_JOBS:-$(nproc)}"
fuzz_seconds="${SESTON_FUZZ_SECONDS:-45}"
fuzz_targets=(csv_reader ndjson_parser config_loader router)

"$root/tools/install-deps.sh" --test

echo "== configure ($build)"
cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DSESTON_WERROR=ON >/dev/null
echo "== build"
cmake --build "$build" -j "$jobs"
echo "== test"
ctest --test-dir "$build" --output-on-failure -j "$jobs" --timeout 900

if [[ "${SESTON_SKIP_SANITIZE:-0}" != 1 ]]; then
  # -O1 keeps the sanitised build and run quick; only the unit tests' executables are
  # built (the end-to-end and crash tests drive release binaries above).
  echo "== sanitisers: configure ($asan_build)"
  cmake -S "$root" -B "$asan_build" -DCMAKE_BUILD_TYPE=Debug -DCMAKE_CXX_FLAGS_DEBUG="-O1 -g" \
    -DSESTON_SANITIZE=ON >/dev/null
  mapfile -t unit_targets < <(cmake --build "$asan_build" --target help |
    sed -n 's/^\.\.\. \([a-z_]*_\(tests\|replay\)\)$/\1/p')
  echo "== sanitisers: build ${#unit_targets[@]} test executables"
  cmake --build "$asan_build" -j "$jobs" --target "${unit_targets[@]}"
  echo "== sanitisers: test"
  ASAN_OPTIONS=detect_leaks=1:abort_on_error=1:strict_string_checks=1 \
    UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
    ctest --test-dir "$asan_build" --output-on-failure -j "$jobs" --timeout 900 -L unit
fi

if (( fuzz_seconds > 0 )); then
  echo "== fuzz: configure ($fuzz_build, clang)"
  cmake -S "$root" -B "$fuzz_build" -DCMAKE_CXX_COMPILER=clang++ -DCMAKE_BUILD_TYPE=RelWithDebInfo \
    -DSESTON_BUILD_FUZZERS=ON >/dev/null
  echo "== fuzz: build"
  cmake --build "$fuzz_build" -j "$jobs" --target "${fuzz_targets[@]/%/_fuzzer}"
  echo "== fuzz: ${fuzz_seconds} s per target, all targets at once"
  # New inputs go to the build's own corpus (first directory); the seeds in tests/ are
  # only read, so a run never changes the source tree unless it finds a crash.
  pids=()
  for target in "${fuzz_targets[@]}"; do
    mkdir -p "$fuzz_build/corpus/$target" "$fuzz_build/artifacts/$target"
    "$fuzz_build/tests/fuzz/${target}_fuzzer" -max_total_time="$fuzz_seconds" -timeout=10 \
      -rss_limit_mb=2048 -max_len=8192 -print_final_stats=1 \
      -artifact_prefix="$fuzz_build/artifacts/$target/" \
      "$fuzz_build/corpus/$target" "$root/tests/fuzz/corpus/$target" \
      >"$fuzz_build/$target.log" 2>&1 &
    pids+=($!)
  done
  failed=()
  for i in "${!fuzz_targets[@]}"; do
    target="${fuzz_targets[$i]}"
    if wait "${pids[$i]}"; then
      echo "fuzz $target: $(grep -m1 -o 'Done [0-9]* runs in [0-9]* second(s)' "$fuzz_build/$target.log")"
    else
      failed+=("$target")
      tail -n 60 "$fuzz_build/$target.log"
      cp -v "$fuzz_build/artifacts/$target/"* "$root/tests/fuzz/crashes/$target/" 2>/dev/null || true
    fi
  done
  if (( ${#failed[@]} > 0 )); then
    echo "fuzz: crash in ${failed[*]}; reproducers copied to tests/fuzz/crashes/ (see its README)"
    exit 1
  fi
fi
echo "== all tests passed"
