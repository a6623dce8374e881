#!/usr/bin/env bash
# Fails if any C++ source differs from .clang-format; `--fix` rewrites them in place.
set -euo pipefail
cd "$(dirname "$0")/.."
# Tracked files and new ones git does not ignore (a file not yet added is checked too).
mapfile -t files < <(git ls-files --cached --others --exclude-standard '*.cpp' '*.hpp' '*.hpp.in')
if [ "${1:-}" = "--fix" ]; then
  clang-format -i "${files[@]}"
else
  clang-format --dry-run --Werror "${files[@]}"
  echo "check-format: ${#files[@]} files formatted"
fi
