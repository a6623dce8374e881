#!/usr/bin/env bash
# The model-mismatch suite on several layouts of each variant's scenario: mismatch_bench once per
# seed offset, then each table's area errors pooled over all the scans (RMS, largest, count within
# ±0.03). One layout per variant hid scans that fail (DEVELOPERS, change 18); the pooled learned
# and model-led figures are the ones src/core/mismatch_systematic.cpp keeps.
#   bash bench/mismatch_layouts.sh [BUILD] [side] [counts] [offsets...]   (defaults: build, 40, 5000, 0 100 200)
# About 2 min per offset on 2 cores once the many-beam spheres are cached (8 min more the first time).
set -euo pipefail
build=${1:-build}
side=${2:-40}
counts=${3:-5000}
shift $(($# < 3 ? $# : 3))
offsets=("$@")
[ ${#offsets[@]} -gt 0 ] || offsets=(0 100 200)
bin=$(realpath "$build/bench/mismatch_bench")
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
for offset in "${offsets[@]}"; do
  echo "seed offset $offset ..." >&2
  # Every variant: the bench stops at its last, whatever LAST says beyond it.
  "$bin" "$side" "$counts" 0 1000 "$offset" > "$work/offset_$offset.txt" 2> /dev/null
  cat "$work/offset_$offset.txt"
done
# Rows are printed as "%-28s %+9.3f ...": the variant's name in 28 columns, then the area error.
awk -v layouts="${#offsets[@]}" '
  /^model-led \(profile\) estimator/ { table = "model-led"; next }
  /^learned \(data-led\) estimator/ { table = "learned"; next }
  /^learned estimator, a / { table = "learned, disordered region"; next }
  /^area error over/ { table = ""; next }
  table != "" && !/^variant / && NF > 0 {
    e = substr($0, 30, 9) + 0
    n[table]++; ss[table] += e * e
    if (e < 0) e = -e
    if (e > big[table]) big[table] = e
    if (e <= 0.03 + 1e-9) within[table]++
  }
  END {
    printf "\npooled over %d layouts per variant\n", layouts
    split("model-led|learned|learned, disordered region", order, "|")
    for (i = 1; i <= 3; i++) {
      t = order[i]
      if (n[t] > 0)
        printf "%-28s scans %d, area error RMS %.3f, largest %.3f, within ±0.03 on %d\n", t, n[t], sqrt(ss[t] / n[t]), big[t], within[t]
    }
  }' "$work"/offset_*.txt
