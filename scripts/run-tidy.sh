#!/usr/bin/env bash
# clang-tidy with the project's check set (.clang-tidy, each check explained there) over every
# source file of src/, any finding an error. Needs a compile database from a clang build:
#   bash scripts/run-tidy.sh [BUILD_DIR=build-sanitize]
# (scripts/run-tests.sh --sanitize makes one; CI runs this after it.)
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
build_dir=${1:-build-sanitize}
if [ ! -f "$build_dir/compile_commands.json" ]; then
  echo "run-tidy: no $build_dir/compile_commands.json (run scripts/run-tests.sh --sanitize first)" >&2
  exit 2
fi
mapfile -t files < <(find src -name '*.cpp' | sort)
echo "run-tidy: ${#files[@]} files"
printf '%s\n' "${files[@]}" | xargs -P "$(nproc)" -n 4 clang-tidy -p "$build_dir" --quiet > build-tidy.log 2>&1 ||
  { grep -E "error:|warning:" -A3 build-tidy.log || cat build-tidy.log; echo "run-tidy: findings above" >&2; exit 1; }
echo "run-tidy: no findings"
