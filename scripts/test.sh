#!/usr/bin/env bash
# One command from a fresh Debian machine to a full test run: installs the packages, builds
# (Release, 2 jobs) and runs every test, then builds again with AddressSanitizer and UBSan and
# runs the suites once more. The last line ctest prints is the verdict CI reads.
#   bash scripts/test.sh
# PULSEWISE_SANITIZE_PASS=0 skips the second pass (a quicker local run).
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build_dir="${PULSEWISE_BUILD_DIR:-${root}/build}"
sanitize_dir="${PULSEWISE_SANITIZE_BUILD_DIR:-${root}/build-sanitize}"
jobs="${PULSEWISE_JOBS:-2}"

bash "${root}/scripts/setup.sh"
PULSEWISE_BUILD_DIR="${build_dir}" bash "${root}/scripts/build.sh"

cd "${build_dir}"
ctest --output-on-failure -j"${jobs}"

if [[ "${PULSEWISE_SANITIZE_PASS:-1}" != 0 ]]; then
  # Memory errors and undefined behaviour abort the test that meets them. The benchmarks are not
  # built here; the format check and the install test do not depend on the build flags (and a
  # sanitized library cannot be installed for an unsanitized consumer), so they run once above.
  PULSEWISE_BUILD_DIR="${sanitize_dir}" bash "${root}/scripts/build.sh" \
    -DPULSEWISE_SANITIZE=ON -DPULSEWISE_BUILD_BENCH=OFF
  cd "${sanitize_dir}"
  UBSAN_OPTIONS="print_stacktrace=1" ctest --output-on-failure -j"${jobs}" -E '^(PackageInstall|Format)\.'
fi
