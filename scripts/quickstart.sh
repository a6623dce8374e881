#!/usr/bin/env bash
# The quick start's main job: install what is missing, build, and run the demo (three synthetic
# ageing trials of an invented alloy, mapped and screened; the report path is printed at the end).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
cmake -S . -B build -DCMAKE_BUILD_TYPE=Release > /dev/null
cmake --build build -j "$(nproc)" --target orderband
./build/orderband demo "$@"
