#!/usr/bin/env bash
# Installs the Debian 12 packages seston needs to build, test and run its demo.
# Runs as root (or through sudo); installs only what is missing, so a second run is quick.
#   tools/install-deps.sh          build + run dependencies
#   tools/install-deps.sh --test   also the outside references used by the tests
set -euo pipefail

packages=(
  build-essential cmake g++ pkg-config
  libboost-dev libeigen3-dev libspdlog-dev libyaml-cpp-dev nlohmann-json3-dev
  libgtest-dev libgmock-dev
  curl python3
)
if [[ "${1:-}" == "--test" ]]; then
  # Outside references for the tests (scikit-learn, SciPy), the fuzzing toolchain, and
  # Ninja and lld, which keep the two test builds quick on two cores.
  packages+=(python3-numpy python3-scipy python3-sklearn python3-pandas clang libclang-rt-14-dev
    ninja-build lld)
  # Real monitoring tools and a browser for the operations tests (tests/ops).
  packages+=(prometheus prometheus-alertmanager chromium)
fi

missing=()
for package in "${packages[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$package")
  fi
done

if (( ${#missing[@]} == 0 )); then
  echo "install-deps: all ${#packages[@]} packages already installed"
  exit 0
fi

echo "install-deps: installing ${missing[*]}"
if [[ $(id -u) -ne 0 ]]; then
  SUDO=sudo
else
  SUDO=
fi
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get update -qq
$SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}"
