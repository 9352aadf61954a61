#!/usr/bin/env bash
# Sets up polystokes (Debian packages, configure, build) and runs every test through ctest.
# The same tests under AddressSanitizer and UndefinedBehaviorSanitizer: scripts/sanitize.sh (a separate build,
# about 25 minutes on two cores, so it is run before a release rather than on every change).
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh build
ctest --test-dir build --output-on-failure -j"$(nproc)"
