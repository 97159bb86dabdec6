#!/usr/bin/env bash
# Builds the libFuzzer targets (FRUGAL_FUZZ, clang, in ./build-fuzz) and runs each for the given
# number of seconds (default 5), one after another. Fails when a target crashes, leaks, times out
# or runs out of memory; the input that did it is kept in build-fuzz/artifacts/.
#   scripts/fuzz.sh [seconds] [target ...]     (default: every target)
# checkpoint_fuzz: libtorch 1.13's own readers crash on some damaged archives (a SEGV in its
# TorchScript type parser, a 27 GB allocation in its unpickler); frugal's checkpoints end with a
# SHA-256 of their bytes, checked before libtorch sees any of them, so damage never reaches it.
# The seed corpus is fuzz/corpus/<target>/ and is only read; inputs the run finds go to
# build-fuzz/corpus/<target>/ and are kept for the next run.
set -euo pipefail
cd "$(dirname "$0")/.."

seconds="${1:-5}"
shift || true
targets=("$@")
if [ "${#targets[@]}" -eq 0 ]; then
  targets=(scenario_yaml_fuzz rater_yaml_fuzz study_yaml_fuzz csv_table_fuzz ratings_table_fuzz nifti_fuzz checkpoint_fuzz)
fi

cmake -S . -B build-fuzz -G Ninja -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCMAKE_C_COMPILER=clang \
  -DCMAKE_CXX_COMPILER=clang++ -DFRUGAL_FUZZ=ON -DFRUGAL_WARNINGS_AS_ERRORS=ON -DFRUGAL_BUILD_TESTS=OFF \
  -DFRUGAL_BUILD_BENCHMARKS=OFF
cmake --build build-fuzz --parallel "$(nproc)" --target "${targets[@]}"

mkdir -p build-fuzz/artifacts
export ASAN_OPTIONS="detect_leaks=1:abort_on_error=1"
export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
# Leaks inside libtorch (not frugal's) are listed there; any other leak fails the run.
export LSAN_OPTIONS="suppressions=$PWD/fuzz/lsan_suppressions.txt"
for target in "${targets[@]}"; do
  mkdir -p "build-fuzz/corpus/$target"
  echo "fuzz: $target for ${seconds} s"
  # -timeout: one input taking 10 s counts as a hang; -rss_limit_mb: 2 GB as running out of memory.
  # -seed: the same inputs every run (FRUGAL_FUZZ_SEED=0 lets libFuzzer pick one).
  "build-fuzz/fuzz/$target" -max_total_time="$seconds" -seed="${FRUGAL_FUZZ_SEED:-1}" -timeout=10 -rss_limit_mb=2048 -print_final_stats=1 \
    -artifact_prefix="build-fuzz/artifacts/$target-" "build-fuzz/corpus/$target" "fuzz/corpus/$target"
done
echo "fuzz: ${#targets[@]} targets ran ${seconds} s each without a crash"
