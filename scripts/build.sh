#!/usr/bin/env bash
# Configures (Release) and builds pulsewise in $PULSEWISE_BUILD_DIR (default: build/).
# Extra arguments go to the CMake configure step, e.g. -DPULSEWISE_SANITIZE=ON.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build_dir="${PULSEWISE_BUILD_DIR:-${root}/build}"
jobs="${PULSEWISE_JOBS:-2}"

cmake -S "${root}" -B "${build_dir}" -DCMAKE_BUILD_TYPE=Release "$@"
cmake --build "${build_dir}" -j"${jobs}"
