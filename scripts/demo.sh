#!/usr/bin/env bash
# The main job: set up, build, and run the bundled demo study (studies/ageing-cohort.yaml: a
# fictional ageing-cohort team with 40 annotator-hours, quick counts against careful outlines, the
# line filter as the zero-annotation reference) into demo/results.db, then print the answer per
# plan and budget with intervals over repeats and the paired differences. A second run resumes:
# finished cells are not run again. All names and values are invented for the demo.
set -euo pipefail
cd "$(dirname "$0")/.."
./scripts/build.sh
./build/cli/frugal demo --out demo --threads "$(nproc)"
