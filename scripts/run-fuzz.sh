#!/usr/bin/env bash
# Fuzzes every parser for a fixed number of inputs (libFuzzer, with AddressSanitizer and
# UndefinedBehaviorSanitizer), starting from the seed corpus in tests/fuzz-corpus/.
#   bash scripts/run-fuzz.sh [SCALE=1] [BUILD_DIR]
# BUILD_DIR: a build configured with -DORDERBAND_FUZZ=ON whose targets are already built (CI uses
# the sanitizer build of scripts/run-tests.sh --sanitize, which builds them); without it, a clang
# build of the targets alone in build-fuzz/.
# Each target runs a fixed number of inputs (about half a minute on one core at SCALE 1; the
# number differs per parser because a parse costs from 30 µs to 2 ms); SCALE multiplies them.
# A crash, a sanitizer report, an exception other than orderband::Error, a hang over 10 s or more
# than 2 GB stops the run with the reproducer written to BUILD_DIR/findings/.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
scale=${1:-1}
declare -A runs=([scan_toml]=300000 [scenario_toml]=300000 [trials_toml]=100000 [cif]=300000
  [orientation_csv]=300000 [npy]=30000 [image]=60000)
targets=(scan_toml scenario_toml trials_toml cif orientation_csv npy image)
build=${2:-}
if [ -z "$build" ]; then
  build=build-fuzz
  CC=clang CXX=clang++ cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DORDERBAND_FUZZ=ON \
    -DORDERBAND_BUILD_TESTS=OFF -DORDERBAND_BUILD_BENCH=OFF
fi
cmake --build "$build" -j "$(nproc)" --target "${targets[@]/#/fuzz_}"
mkdir -p "$build"/findings
export ASAN_OPTIONS=detect_leaks=1:abort_on_error=1
export UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1
for t in "${targets[@]}"; do
  work=$build/corpus/$t
  rm -rf "$work" && mkdir -p "$work"
  n=$(( ${runs[$t]} * scale ))
  echo "fuzz_$t: $n inputs"
  # New inputs go to the working corpus; the seeds in tests/ stay as they are.
  "$build"/fuzz/fuzz_$t -runs="$n" -seed=1 -max_len=4096 -timeout=10 -rss_limit_mb=2048 \
    -artifact_prefix="$build"/findings/"$t"- -print_final_stats=1 "$work" "tests/fuzz-corpus/$t" \
    2> "$build/fuzz_$t.log" || { tail -40 "$build/fuzz_$t.log"; exit 1; }
  grep -E "stat::number_of_executed_units|stat::peak_rss_mb" "$build/fuzz_$t.log" | tr '\n' ' '
  echo
done
