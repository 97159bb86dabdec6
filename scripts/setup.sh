#!/usr/bin/env bash
# Installs every Debian package frugal needs to build, run and test. Idempotent: it installs
# only what is missing, runs `apt-get update` at most once, and uses sudo when not root.
set -euo pipefail

packages=(
  build-essential cmake ninja-build pkg-config ccache
  libeigen3-dev libopencv-dev libyaml-cpp-dev
  libnifti2-dev libniftiio-dev libznz-dev zlib1g-dev
  libcli11-dev nlohmann-json3-dev libsqlite3-dev libssl-dev
  libgtest-dev libgmock-dev libbenchmark-dev
  # libFuzzer and the sanitizer runtimes for clang (scripts/fuzz.sh).
  clang libclang-rt-14-dev
  # The learning part (CPU libtorch) and TorchScript modules scripted inside its tests.
  libtorch-dev python3-torch
  # Figures of the report (PLplot through its cairo driver: SVG, PNG, PDF).
  libplplot-dev plplot-driver-cairo
  # The report's rendering test opens the HTML page in a real browser.
  chromium
  # Reference libraries that the tests compare against.
  python3 python3-numpy python3-scipy python3-sklearn python3-skimage python3-nibabel python3-opencv python3-jsonschema
)

missing=()
for package in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$package")
  fi
done

if [ "${#missing[@]}" -eq 0 ]; then
  echo "setup: all ${#packages[@]} packages already installed"
  exit 0
fi

as_root=()
if [ "$(id -u)" -ne 0 ]; then
  as_root=(sudo)
fi

echo "setup: installing ${missing[*]}"
export DEBIAN_FRONTEND=noninteractive
"${as_root[@]}" apt-get update -q
"${as_root[@]}" apt-get install -y -q --no-install-recommends "${missing[@]}"
