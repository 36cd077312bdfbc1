#!/usr/bin/env bash
# hallway set-up on Debian 12: installs the Debian packages hallway needs (only those missing),
# builds in Release, then runs the demo or the test suite.
#
#   bash scripts/setup.sh demo   # install, build, run the main job on a bundled demo design
#   bash scripts/setup.sh test   # install, build, run the whole test suite
#   bash scripts/setup.sh build  # install and build only
#
# Environment: BUILD_DIR (default: build), JOBS (default: number of cores).
set -euo pipefail

mode="${1:-build}"
case "$mode" in demo|test|build) ;; *) echo "usage: $0 demo|test|build" >&2; exit 2 ;; esac

here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build_dir="${BUILD_DIR:-$here/build}"
jobs="${JOBS:-$(nproc)}"

packages=(
  g++ cmake ninja-build pkg-config
  libeigen3-dev libspectra-dev libcgal-dev libboost-dev libnanoflann-dev libyaml-cpp-dev
  libgtest-dev libgmock-dev libbenchmark-dev libgsl-dev
  libfftw3-dev libcli11-dev libfmt-dev nlohmann-json3-dev libcairo2-dev
  libtbb-dev libopenmpi-dev openmpi-bin
)
# The test suite also checks the HTML report with an HTML checker and a headless browser.
if [ "$mode" = test ]; then packages+=(tidy chromium); fi

missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if ((${#missing[@]})); then
  echo "hallway setup: installing ${missing[*]}"
  sudo_cmd=()
  if [ "$(id -u)" -ne 0 ]; then sudo_cmd=(sudo); fi
  export DEBIAN_FRONTEND=noninteractive
  "${sudo_cmd[@]}" apt-get update -q
  "${sudo_cmd[@]}" apt-get install -y -q --no-install-recommends "${missing[@]}"
fi

cmake -S "$here" -B "$build_dir" -G Ninja -DCMAKE_BUILD_TYPE=Release -DHALLWAY_BUILD_TESTS=ON
cmake --build "$build_dir" -j "$jobs"

case "$mode" in
  demo)
    "$build_dir/cli/hallway" check "$here/designs/01_hallbar_qpc.yaml"
    "$build_dir/cli/hallway" solve "$here/designs/01_hallbar_qpc.yaml"
    "$build_dir/cli/hallway" map "$here/designs/01_hallbar_qpc.yaml"
    "$build_dir/cli/hallway" noise "$here/designs/01_hallbar_qpc.yaml"
    "$build_dir/cli/hallway" report "$here/designs/01_hallbar_qpc.yaml" -o "$build_dir/demo-report"
    echo "demo report: $build_dir/demo-report/report.html"
    ;;
  test)
    ctest --test-dir "$build_dir" --output-on-failure -j "$jobs"
    ;;
esac
