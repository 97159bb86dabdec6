#!/usr/bin/env bash
# Set up, build with warnings as errors, and run the whole test suite; then the torch-free tests
# again under ASan + UBSan (scripts/sanitize.sh) and a few seconds of every fuzz target
# (scripts/fuzz.sh, a fixed libFuzzer seed so a failure reproduces).
set -euo pipefail
cd "$(dirname "$0")/.."
./scripts/build.sh -DFRUGAL_WARNINGS_AS_ERRORS=ON
ctest --test-dir build --output-on-failure --parallel "$(nproc)"
./scripts/sanitize.sh
./scripts/fuzz.sh 5
