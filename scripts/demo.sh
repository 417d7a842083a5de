#!/usr/bin/env bash
# One command from a fresh Debian machine to the demo: installs the packages, builds, runs the
# default scenario (a light-load boost for a battery sensor node), prints the summary, writes the
# trace file and a PNG of the start-up and of the last periods.
#   bash scripts/demo.sh [CIRCUIT.toml]
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build_dir="${PULSEWISE_BUILD_DIR:-${root}/build}"
scenario="${1:-${root}/data/sensor-node-boost.toml}"
out_dir="${PULSEWISE_OUT_DIR:-${root}/out}"
name="$(basename "${scenario}" .toml)"

bash "${root}/scripts/setup.sh"
PULSEWISE_BUILD_DIR="${build_dir}" bash "${root}/scripts/build.sh"

mkdir -p "${out_dir}"
trace="${out_dir}/${name}.h5"
png="${out_dir}/${name}.png"

"${build_dir}/apps/pulsewise" run "${scenario}" -o "${trace}"
/usr/bin/python3 "${root}/scripts/plot-traces" "${trace}" -o "${png}"
echo
echo "trace file: ${trace}"
echo "plot:       ${png}"
