#!/usr/bin/env bash
# Checks that the C++ sources are formatted with the repository's .clang-format.
#   bash scripts/check-format.sh          report unformatted files, exit 1 if any
#   bash scripts/check-format.sh --fix    reformat them in place
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
clang_format="${CLANG_FORMAT:-clang-format}"
mode="check"
if [[ "${1:-}" == "--fix" ]]; then mode="fix"; fi

if ! command -v "${clang_format}" >/dev/null 2>&1; then
  echo "check-format.sh: ${clang_format} not found (apt-get install clang-format)" >&2
  exit 1
fi

cd "${root}"
mapfile -t files < <(find lib apps tests bench examples -type f \
  \( -name '*.cpp' -o -name '*.hpp' -o -name '*.h' -o -name '*.cc' \) 2>/dev/null | sort)

if [[ "${mode}" == "fix" ]]; then
  "${clang_format}" -i "${files[@]}"
  echo "check-format.sh: formatted ${#files[@]} files"
  exit 0
fi

bad=()
for f in "${files[@]}"; do
  if ! "${clang_format}" --dry-run --Werror "${f}" >/dev/null 2>&1; then bad+=("${f}"); fi
done
if ((${#bad[@]})); then
  echo "check-format.sh: ${#bad[@]} of ${#files[@]} files are not formatted:" >&2
  printf '  %s\n' "${bad[@]}" >&2
  echo "fix with: bash scripts/check-format.sh --fix" >&2
  exit 1
fi
echo "check-format.sh: ${#files[@]} files formatted"
