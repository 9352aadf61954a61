#!/usr/bin/env bash
# Builds polystokes and its tests with AddressSanitizer and UndefinedBehaviorSanitizer (POLYSTOKES_SANITIZE)
# in a build directory of their own and runs every test there through ctest; slow tests stay hidden as in
# the normal run. Any sanitizer report fails its test. Called by scripts/test.sh after the normal run.
# Usage: scripts/sanitize.sh [BUILD_DIR (default build-asan)]
set -euo pipefail
cd "$(dirname "$0")/.."
build_dir="${1:-build-asan}"

# -O1 keeps the instrumented tests fast enough, -g1 gives reports file and line; POLYSTOKES_SANITIZE keeps
# frame pointers. Only what ctest runs is built (the CLI and the test programs, not tools or benchmarks).
cmake -S . -B "$build_dir" -DCMAKE_BUILD_TYPE=Release -DCMAKE_CXX_FLAGS_RELEASE="-O1 -g1 -DNDEBUG" \
  -DPOLYSTOKES_SANITIZE=ON -DPOLYSTOKES_PYTHON=OFF >/dev/null
targets=(polystokes)
for test_source in tests/*_test.cpp; do
  test_name="$(basename "$test_source" .cpp)"
  targets+=("$test_name")
done
start=$SECONDS
cmake --build "$build_dir" -j"$(nproc)" --target "${targets[@]}"
echo "polystokes sanitize: built in $((SECONDS - start)) s"
# Undefined behaviour already aborts (-fno-sanitize-recover); leaks and memory errors end the test too.
export ASAN_OPTIONS="abort_on_error=1:detect_leaks=1:check_initialization_order=1:strict_init_order=1"
export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
start=$SECONDS
# The Python, package and cluster tests exercise packaging and services, not memory safety: normal pass only.
ctest --test-dir "$build_dir" --output-on-failure -j"$(nproc)" -LE "python|package|cluster"
echo "polystokes sanitize: tests ran in $((SECONDS - start)) s"
