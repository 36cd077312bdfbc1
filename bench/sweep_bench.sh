#!/usr/bin/env bash
# Timed driver for `hallway sweep` (not a test): 40 electrostatic points of the Fabry-Perot demo,
# serially, with 2 threads, with 2 MPI ranks, and serially without warm starts.
#   bash bench/sweep_bench.sh [BUILD_DIR]
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
exe="${1:-$here/build}/cli/hallway"
design="$here/designs/03_fabry_perot.yaml"
vary="gates.Q1N.voltage=-0.7V:-1.1V:40"
out="$(mktemp -d)"
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 OMPI_MCA_rmaps_base_oversubscribe=1
run() {
  local label="$1"; shift
  local t0 t1
  t0=$(date +%s.%N)
  "$@" > "$out/log.txt"
  t1=$(date +%s.%N)
  printf '%-22s %8.2f s   %s\n' "$label" "$(echo "$t1 - $t0" | bc)" "$(grep -o "[0-9]* electrostatic operator applications.*" "$out/log.txt")"
}
run "serial, warm starts" "$exe" sweep "$design" --vary "$vary" --output "$out/serial.csv" --threads 1 --quiet
run "2 threads" "$exe" sweep "$design" --vary "$vary" --output "$out/threads.csv" --threads 2 --quiet
run "2 MPI ranks" mpirun -np 2 "$exe" sweep "$design" --vary "$vary" --output "$out/mpi.csv" --threads 1 --quiet
run "serial, cold starts" "$exe" sweep "$design" --vary "$vary" --output "$out/cold.csv" --threads 1 --quiet --cold
cmp "$out/serial.csv" "$out/threads.csv" && cmp "$out/serial.csv" "$out/mpi.csv" && echo "serial, threads and MPI files are identical"
rm -rf "$out"
