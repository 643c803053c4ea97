#!/usr/bin/env bash
# Sets everything up and runs the whole test suite: installs missing Debian packages,
# builds with warnings as errors, runs every CTest test (unit, reference checks against
# scikit-learn/SciPy, end-to-end tests that drive the real binaries, the kill -9 crash
# test), then builds once more with clang under AddressSanitizer + UndefinedBehaviorSanitizer
# (with libFuzzer's coverage hooks), runs the unit tests in that build and each libFuzzer
# target for a bounded time. Any failure, sanitiser report or fuzzing crash fails the
# command; a crash input is copied to tests/fuzz/crashes/<target>/. Each phase prints how
# long it took.
# Usage: tools/test.sh            (from anywhere; builds into build/ci and build/sanitize
#                                  beside the sources)
# Knobs: SESTON_JOBS (default nproc), SESTON_FUZZ_SECONDS per target (default 45; 0 skips
#        fuzzing), SESTON_SKIP_SANITIZE=1 skips the sanitised build (and so the fuzzing).
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${SESTON_BUILD_DIR:-$root/build/ci}"
sanitize_build="$root/build/sanitize"
jobs="${SESTON_JOBS:-$(nproc)}"
fuzz_seconds="${SESTON_FUZZ_SECONDS:-45}"
fuzz_targets=(csv_reader ndjson_parser config_loader router)

phase_start=$SECONDS
phase() {  # phase NAME: ends the previous phase (printing its duration) and names the next
  if [[ -n "${phase_name:-}" ]]; then
    echo "-- ${phase_name}: $((SECONDS - phase_start)) s (total $SECONDS s)"
  fi
  phase_name="$1"
  phase_start=$SECONDS
  [[ -n "$1" ]] && echo "== $1"
  return 0
}

phase "install packages"
"$root/tools/install-deps.sh" --test

# Ninja schedules two cores better than make; lld links the test executables in a
# fraction of the time of ld.bfd. Without debug info the release build is a third quicker.
generator=(-G Ninja)
linker=(-DCMAKE_EXE_LINKER_FLAGS=-fuse-ld=lld)
for dir in "$build" "$sanitize_build"; do  # a folder configured for make cannot switch
  if grep -qs 'CMAKE_GENERATOR:INTERNAL=Unix Makefiles' "$dir/CMakeCache.txt"; then rm -rf "$dir"; fi
done
phase "release: configure and build ($build)"
cmake -S "$root" -B "$build" "${generator[@]}" "${linker[@]}" -DCMAKE_BUILD_TYPE=Release \
  -DCMAKE_CXX_FLAGS_RELEASE="-O2 -DNDEBUG" -DSESTON_WERROR=ON >/dev/null
cmake --build "$build" -j "$jobs"
phase "release: every test"
ctest --test-dir "$build" --output-on-failure -j "$jobs" --timeout 900

if [[ "${SESTON_SKIP_SANITIZE:-0}" != 1 ]]; then
  # One clang build serves both the sanitised unit tests and the fuzzers: with
  # SESTON_BUILD_FUZZERS every library is compiled with ASan and UBSan, the fuzzed ones
  # also with libFuzzer's coverage hooks. The libraries at -O1 (the tests' k-means runs
  # stay quick), the tests' own sources at -O0, line tables only for the stack traces:
  # together they halve the build. Only the unit tests' executables and the fuzz targets
  # are built (the end-to-end and crash tests drove the release binaries above).
  phase "sanitised: configure and build ($sanitize_build, clang)"
  cmake -S "$root" -B "$sanitize_build" "${generator[@]}" "${linker[@]}" \
    -DCMAKE_CXX_COMPILER=clang++ -DCMAKE_BUILD_TYPE=Debug \
    -DCMAKE_CXX_FLAGS_DEBUG="-O1 -gline-tables-only" -DSESTON_UNOPTIMISED_TESTS=ON \
    -DSESTON_BUILD_FUZZERS=ON >/dev/null
  mapfile -t unit_targets < <(ninja -C "$sanitize_build" -t targets all |
    sed -n 's/^\([a-z_]*_tests\): phony$/\1/p')
  echo "building ${#unit_targets[@]} test executables and ${#fuzz_targets[@]} fuzz targets"
  cmake --build "$sanitize_build" -j "$jobs" --target "${unit_targets[@]}" "${fuzz_targets[@]/%/_fuzzer}"
  phase "sanitised: unit tests"
  ASAN_OPTIONS=detect_leaks=1:abort_on_error=1:strict_string_checks=1 \
    UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
    ctest --test-dir "$sanitize_build" --output-on-failure -j "$jobs" --timeout 900 -L unit
fi

if [[ "${SESTON_SKIP_SANITIZE:-0}" != 1 ]] && (( fuzz_seconds > 0 )); then
  fuzz_build="$sanitize_build"
  phase "fuzz: ${fuzz_seconds} s per target, all targets at once"
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
phase ""
echo "== all tests passed in $SECONDS s"
