#!/usr/bin/env bash
# One command from a fresh Debian machine to a full test run: installs the packages, builds
# (Release, 2 jobs) and runs every test. The last line ctest prints is the verdict CI reads.
#   bash scripts/test.sh
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build_dir="${PULSEWISE_BUILD_DIR:-${root}/build}"
jobs="${PULSEWISE_JOBS:-2}"

bash "${root}/scripts/setup.sh"
PULSEWISE_BUILD_DIR="${build_dir}" bash "${root}/scripts/build.sh"

cd "${build_dir}"
ctest --output-on-failure -j"${jobs}"
