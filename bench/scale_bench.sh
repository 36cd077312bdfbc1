#!/usr/bin/env bash
# Timed driver for large designs (not a test): wall time and peak resident memory of `check`,
# `solve --fast`, `solve` and `map` on 500 gates and on one gate outlined by 10,000 points (the
# designs are written by bench/scale_designs.py; invented layouts). README.md "Scale" lists the figures.
#   bash bench/scale_bench.sh [BUILD_DIR] [COMMAND ...]     (commands: check fast solve map; default all)
set -uo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
exe="${1:-$here/build}/cli/hallway"
shift || true
commands=("$@")
[ ${#commands[@]} -eq 0 ] && commands=(check fast solve map)
out="$(mktemp -d)"
trap 'rm -rf "$out"' EXIT
python3 "$here/bench/scale_designs.py" "$out"
printf '%-15s %-12s %9s %10s %5s\n' design command wall_s peak_MiB exit
for design in grid500 finger10k; do
  for c in "${commands[@]}"; do
    case "$c" in
      check) args=(check) ;;
      fast) args=(solve --fast) ;;
      solve) args=(solve) ;;
      map) args=(map) ;;
      *) echo "unknown command $c" >&2; exit 2 ;;
    esac
    /usr/bin/time -f '%e %M' -o "$out/time.txt" "$exe" "${args[@]}" "$out/$design.yaml" > "$out/log.txt" 2>&1
    rc=$?
    read -r wall kib < "$out/time.txt"
    printf '%-15s %-12s %9.1f %10.0f %5d\n' "$design" "${args[*]}" "$wall" "$((kib / 1024))" "$rc"
  done
done
