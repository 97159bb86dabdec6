#!/usr/bin/env bash
# Set up, build with warnings as errors, and run the whole test suite.
set -euo pipefail
cd "$(dirname "$0")/.."
./scripts/build.sh -DFRUGAL_WARNINGS_AS_ERRORS=ON
ctest --test-dir build --output-on-failure --parallel "$(nproc)"
