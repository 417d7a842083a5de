#!/usr/bin/env bash
# Installs every Debian package pulsewise needs to build, test, run the demo and plot traces.
# Runs as root (CI, containers) or through sudo when that is available.
set -euo pipefail

packages=(
  build-essential cmake g++ pkg-config
  libeigen3-dev libboost-dev
  libhdf5-dev
  libtomlplusplus-dev libcli11-dev libfmt-dev nlohmann-json3-dev
  libgtest-dev libgmock-dev libbenchmark-dev
  python3 python3-h5py python3-matplotlib python3-numpy
  clang-format
)

if [[ "${PULSEWISE_SKIP_SETUP:-0}" == "1" ]]; then
  echo "setup.sh: PULSEWISE_SKIP_SETUP=1, not installing packages" >&2
  exit 0
fi

if [[ "$(id -u)" -eq 0 ]]; then
  as_root=()
elif command -v sudo >/dev/null 2>&1; then
  as_root=(sudo)
else
  echo "setup.sh: not root and no sudo; install these packages yourself:" >&2
  echo "  ${packages[*]}" >&2
  exit 1
fi

export DEBIAN_FRONTEND=noninteractive
"${as_root[@]}" apt-get update
"${as_root[@]}" apt-get install -y "${packages[@]}"
