#!/usr/bin/env bash
# Builds the torch-free test programs with AddressSanitizer and UndefinedBehaviorSanitizer
# (FRUGAL_SANITIZE, in ./build-sanitize) and runs them. Any sanitizer report fails the run.
# The learn, study and command-line tests link torch and are not part of it.
set -euo pipefail
cd "$(dirname "$0")/.."

parts=(phantoms corruptors measure calibration baselines scoring store)
folders=(tests/phantoms tests/corruptors)
for part in "${parts[@]:2}"; do folders+=("tests/experiments/$part"); done

# Every GoogleTest program declared in those folders (frugal_add_test(<name> ...)).
targets=()
for folder in "${folders[@]}"; do
  while read -r name; do targets+=("$name"); done < <(sed -n 's/^frugal_add_test(\([a-z_0-9]*\) .*/\1/p' "$folder/CMakeLists.txt")
done

cmake -S . -B build-sanitize -G Ninja -DCMAKE_BUILD_TYPE=RelWithDebInfo -DFRUGAL_SANITIZE=ON \
  -DFRUGAL_WARNINGS_AS_ERRORS=ON -DFRUGAL_BUILD_BENCHMARKS=OFF
cmake --build build-sanitize --parallel "$(nproc)" --target "${targets[@]}"

export ASAN_OPTIONS="detect_leaks=1:abort_on_error=1:strict_string_checks=1"
export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
# Tests are labelled with their part's folder name (frugal_add_test in cmake/FrugalHelpers.cmake).
labels="^($(IFS='|'; echo "${parts[*]}"))\$"
ctest --test-dir build-sanitize --output-on-failure --parallel "$(nproc)" -L "$labels"
