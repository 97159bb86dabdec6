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
# What the same subjects cost to label: quick counts against careful outlines.
./build/cli/frugal labels scenarios/ageing-cohort-streaks.yaml --rater raters/quick-reader.yaml --kind count \
  --count 64 --seed 2026 --threads "$(nproc)" --out demo/streaks-counts --overwrite
./build/cli/frugal labels scenarios/ageing-cohort-streaks.yaml --rater raters/careful-reader.yaml --kind outline \
  --count 64 --seed 2026 --threads "$(nproc)" --out demo/streaks-outlines --overwrite
echo "Open demo/streaks/preview.png and demo/voids/preview.png; the truth is in demo/*/truth.csv,"
echo "the simulated labels and their annotator time in demo/streaks-counts and demo/streaks-outlines."
