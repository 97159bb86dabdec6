#!/usr/bin/env bash
# Installs the Debian packages (scripts/setup.sh), then configures and builds frugal in ./build.
set -euo pipefail
cd "$(dirname "$0")/.."
./scripts/setup.sh
cmake -S . -B build -G Ninja -DCMAKE_BUILD_TYPE=Release "$@"
cmake --build build --parallel "$(nproc)"
