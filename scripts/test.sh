#!/usr/bin/env bash
# Sets up polystokes (Debian packages, configure, build) and runs every test through ctest, then runs the
# same tests again under AddressSanitizer and UndefinedBehaviorSanitizer in build-asan (scripts/sanitize.sh).
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh build
ctest --test-dir build --output-on-failure -j"$(nproc)"
scripts/sanitize.sh build-asan
