#!/usr/bin/env bash
# `map` and `screen` shared among the processes of an MPI launch: points/s with 1, 2 and 4
# processes of one thread each (4 is oversubscribed on a 2-core machine: a check of the numbers,
# not of the speed), the serial share from the 2-process speed-up (Amdahl: 1/S = s + (1 − s)/N,
# the steps every process repeats and the exchanges counted together) and what it predicts for 64.
#   bash bench/process_scaling.sh [BUILD] [side] [px]      (defaults: build, 96, 60)
# Needs a build with -DORDERBAND_MPI=ON (scripts/run-tests.sh makes one in build/).
set -euo pipefail
build=${1:-build}
side=${2:-96}
px=${3:-60}
bin=$(realpath "$build/orderband")
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
half=$((px / 2))
cat > "$work/s.toml" <<TOML
[scenario]
seed = 7
[scan]
rows = $side
cols = $side
step_um = 0.025
[detector]
width_px = $px
height_px = $px
pc_px = [$half.0, $((px * 3 / 10)).0]
distance_px = $((px * 3 / 4)).0
[grains]
count = 4
[secondary]
area_fraction = 0.3
distribution = "lognormal"
median_diameter_um = 0.15
sigma_ln = 0.2
TOML
"$bin" synth "$work/s.toml" -o "$work/scan" --quiet
points=$((side * side))
seconds() { date +%s.%N; }
calc() { python3 -c "print($1)"; }
run() {  # processes, output folder
  local n=$1 out=$2 t0 t1
  t0=$(seconds)
  if [ "$n" -eq 1 ]; then
    "$bin" map "$work/scan/scan.toml" -o "$out" --threads 1 --quiet
  else
    mpirun -np "$n" --oversubscribe "$bin" map "$work/scan/scan.toml" -o "$out" --threads 1 --quiet
  fi
  t1=$(seconds)
  calc "$t1 - $t0"
}
area() { python3 -c "import json,sys; print(json.load(open(sys.argv[1]))['ordered_area_fraction'])" "$1/summary.json"; }
echo "map of $side x $side points, $px x $px px, one thread per process"
declare -A time
for n in 1 2 4; do
  time[$n]=$(run "$n" "$work/out$n")
  printf "%d process(es): %7.2f s  %8.0f points/s  speed-up %5.2f  area fraction %s\n" "$n" "${time[$n]}" \
    "$(calc "$points / ${time[$n]}")" "$(calc "${time[1]} / ${time[$n]}")" "$(area "$work/out$n")"
done
s=$(calc "2 * ${time[2]} / ${time[1]} - 1")
printf "serial share from 2 processes: %.3f; Amdahl's speed-up at 64 processes: %.1f\n" "$s" \
  "$(calc "1 / ($s + (1 - $s) / 64)")"
