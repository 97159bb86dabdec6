#!/usr/bin/env bash
# The main job of this version: set up, build, and draw the bundled demo phantom sets with
# their truth tables and preview montages (demo/streaks and demo/voids).
set -euo pipefail
cd "$(dirname "$0")/.."
./scripts/build.sh
./build/cli/frugal phantoms scenarios/ageing-cohort-streaks.yaml --count 64 --seed 2026 --threads "$(nproc)" \
  --out demo/streaks --overwrite
./build/cli/frugal phantoms scenarios/screening-voids.yaml --count 64 --seed 2026 --threads "$(nproc)" \
  --out demo/voids --overwrite
echo "Open demo/streaks/preview.png and demo/voids/preview.png; the truth is in demo/*/truth.csv."
