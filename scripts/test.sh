#!/usr/bin/env bash
# Sets up polystokes (Debian packages, configure, build) and runs every test through ctest.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/setup.sh build
ctest --test-dir build --output-on-failure -j"$(nproc)"
