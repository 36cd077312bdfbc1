#!/usr/bin/env bash
# Runs each libFuzzer target for SECONDS on a scratch copy of its seed corpus and fails if a target
# reports a finding (crash, sanitizer report, uncaught exception, time-out or memory blow-up).
#   bash tests/fuzz/run_fuzzers.sh BUILD_DIR [SECONDS]
# Seeds: the demo, invalid and bad-input designs and the test designs for the loader; the GDSII
# fixtures for the reader. Findings are kept in BUILD_DIR/fuzz-findings.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
build_dir="$1"
seconds="${2:-60}"
findings="$build_dir/fuzz-findings"
mkdir -p "$findings"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
export ASAN_OPTIONS="${ASAN_OPTIONS:-detect_leaks=1}"
export UBSAN_OPTIONS="${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}"

run() {
  local name="$1" dict="$2"; shift 2
  local corpus="$work/$name"
  mkdir -p "$corpus"
  cp "$@" "$corpus/"
  local args=(-max_total_time="$seconds" -timeout=10 -rss_limit_mb=2048 -max_len=65536
              -print_final_stats=1 -artifact_prefix="$findings/$name-")
  if [ -n "$dict" ]; then args+=(-dict="$dict"); fi
  echo "fuzzing $name for $seconds s on $(ls "$corpus" | wc -l) seeds"
  if ! "$build_dir/tests/fuzz/hallway_${name}_fuzz" "${args[@]}" "$corpus" > "$work/$name.log" 2>&1; then
    tail -n 60 "$work/$name.log"
    echo "fuzz target $name reported a finding; the input is in $findings" >&2
    exit 1
  fi
  grep -E "stat::number_of_executed_units|stat::peak_rss_mb|cov: " "$work/$name.log" | tail -n 3
}

shopt -s nullglob
run design_loader "$here/tests/fuzz/design.dict" \
  "$here"/designs/*.yaml "$here"/designs/invalid/*.yaml "$here"/tests/data/bad/*.yaml \
  "$here"/tests/data/gds/*.yaml "$here"/tests/data/network/*.yaml "$here"/tests/data/noise/*.yaml \
  "$here"/tests/data/electrostatics/*.yaml
run gdsii "" "$here"/tests/data/gds/*.gds
