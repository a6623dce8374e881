#!/usr/bin/env bash
# The quick start's main job: install what is missing, build, and run orderband on the
# built-in default (the shipped nickel-base gamma/gamma-prime pair at 20 kV).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
cmake -S . -B build -DCMAKE_BUILD_TYPE=Release > /dev/null
cmake --build build -j "$(nproc)" --target orderband
./build/orderband families "$@"
