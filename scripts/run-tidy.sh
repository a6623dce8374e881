#!/usr/bin/env bash
# clang-tidy with the project's check set (.clang-tidy, each check explained there) over every
# source file of src/, any finding an error:
#   bash scripts/run-tidy.sh [BUILD_DIR=build-tidy]
# The compile database comes from configuring a clang build with one entry per source file (no
# batches; nothing is built).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
build_dir=${1:-build-tidy}
cmake -S . -B "$build_dir" -DCMAKE_EXPORT_COMPILE_COMMANDS=ON -DCMAKE_UNITY_BUILD=OFF -DCMAKE_C_COMPILER=clang \
  -DCMAKE_CXX_COMPILER=clang++ -DORDERBAND_HEADER_CHECK=OFF > /dev/null
mapfile -t files < <(find src -name '*.cpp' | sort)
echo "run-tidy: ${#files[@]} files"
printf '%s\n' "${files[@]}" | xargs -P "$(nproc)" -n 4 clang-tidy -p "$build_dir" --quiet > build-tidy.log 2>&1 ||
  { grep -E "error:|warning:" -A3 build-tidy.log || cat build-tidy.log; echo "run-tidy: findings above" >&2; exit 1; }
echo "run-tidy: no findings"
