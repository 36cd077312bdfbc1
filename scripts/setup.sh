#!/usr/bin/env bash
# hallway set-up on Debian 12: installs the Debian packages hallway needs (only those missing),
# builds in Release, then runs the demo or the test suite.
#
#   bash scripts/setup.sh demo   # install, build, run the main job on a bundled demo design
#   bash scripts/setup.sh test   # install, build, run the whole test suite
#   bash scripts/setup.sh build  # install and build only
#   bash scripts/setup.sh sanitize  # clang build with AddressSanitizer + UndefinedBehaviorSanitizer:
#                                   # the whole test suite, then each libFuzzer target for FUZZ_SECONDS
#
# Environment: BUILD_DIR (default: build; build-sanitize for sanitize), JOBS (default: number of
# cores), FUZZ_SECONDS (default 60 per fuzz target).
set -euo pipefail

mode="${1:-build}"
case "$mode" in demo|test|build|sanitize) ;; *) echo "usage: $0 demo|test|build|sanitize" >&2; exit 2 ;; esac

here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
if [ "$mode" = sanitize ]; then build_dir="${BUILD_DIR:-$here/build-sanitize}"; else build_dir="${BUILD_DIR:-$here/build}"; fi
jobs="${JOBS:-$(nproc)}"

packages=(
  g++ cmake ninja-build pkg-config
  libeigen3-dev libspectra-dev libcgal-dev libboost-dev libnanoflann-dev libyaml-cpp-dev
  libgtest-dev libgmock-dev libbenchmark-dev libgsl-dev
  libfftw3-dev libcli11-dev libfmt-dev nlohmann-json3-dev libcairo2-dev
  libtbb-dev libopenmpi-dev openmpi-bin
  pybind11-dev python3-dev python3-numpy python3-pytest
)
# The test suite also checks the HTML report with an HTML checker and a headless browser; the
# sanitizer build and the fuzzers need clang and its runtime libraries.
if [ "$mode" = test ] || [ "$mode" = sanitize ]; then packages+=(tidy chromium clang libclang-rt-14-dev); fi

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

if [ "$mode" = sanitize ]; then
  # -O1 keeps the sanitized suite fast enough; line tables give file:line in every report.
  cmake -S "$here" -B "$build_dir" -G Ninja -DCMAKE_BUILD_TYPE=None -DCMAKE_CXX_COMPILER=clang++ \
    "-DCMAKE_CXX_FLAGS=-O1 -gline-tables-only" -DHALLWAY_BUILD_TESTS=ON -DHALLWAY_SANITIZE=ON -DHALLWAY_BUILD_FUZZ=ON \
    -DHALLWAY_PYTHON=OFF  # an instrumented extension cannot be loaded into the uninstrumented interpreter
else
  cmake -S "$here" -B "$build_dir" -G Ninja -DCMAKE_BUILD_TYPE=Release -DHALLWAY_BUILD_TESTS=ON
fi
cmake --build "$build_dir" -j "$jobs"

case "$mode" in
  demo)
    "$build_dir/cli/hallway" check "$here/designs/01_hallbar_qpc.yaml"
    "$build_dir/cli/hallway" solve "$here/designs/01_hallbar_qpc.yaml"
    "$build_dir/cli/hallway" map "$here/designs/01_hallbar_qpc.yaml"
    "$build_dir/cli/hallway" noise "$here/designs/01_hallbar_qpc.yaml"
    "$build_dir/cli/hallway" report "$here/designs/01_hallbar_qpc.yaml" -o "$build_dir/demo-report"
    echo "demo report: $build_dir/demo-report/report.html"
    # The Python module (README.md, "Python"): the collider demo's SNR against its source constrictions;
    # a plot only when matplotlib is installed. Debian's NumPy belongs to the system interpreter.
    if [ -d "$build_dir/python/hallway" ]; then
      python=/usr/bin/python3; [ -x "$python" ] || python=python3
      PYTHONPATH="$build_dir/python" "$python" "$here/python/examples/collider_sweep.py" --plot "$build_dir/demo-snr.png"
    else
      echo "Python module not built (HALLWAY_PYTHON=OFF): Python example skipped"
    fi
    ;;
  test)
    ctest --test-dir "$build_dir" --output-on-failure -j "$jobs"
    ;;
  sanitize)
    # Any sanitizer report fails its test. Leaks inside fontconfig (reached through Cairo's text) and
    # OpenMPI's start-up are theirs, not ours: tests/sanitizer/lsan.supp lists exactly those.
    export ASAN_OPTIONS="detect_leaks=1:strict_string_checks=1:check_initialization_order=1"
    export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
    export LSAN_OPTIONS="suppressions=$here/tests/sanitizer/lsan.supp:print_suppressions=0"
    # Left to the Release run (`test`), which runs every test: the HTML checker and the headless browser
    # (they exercise tidy and chromium, not our code), a grid-convergence study and two loops that run
    # the CLI on every design (their code paths are sanitized by the other tests); together they took
    # over 8 minutes of the sanitized suite, which must stay within the 30 minutes of CI.
    slow='Report\.RendersInAHeadlessBrowser|Report\.IsValidHtmlForAnHtmlChecker|Electrostatics\.PinchOffVoltageConvergesWithTheGrid'
    slow+='|WiringVerdict\.CheckAndSolveAgreeOnEveryDemoAndTestDesign|WiringVerdict\.SelfConsistentSolveGivesTheSameVerdictOnTheDemos'
    ctest --test-dir "$build_dir" --output-on-failure -j "$jobs" --timeout 900 -E "$slow"
    bash "$here/tests/fuzz/run_fuzzers.sh" "$build_dir" "${FUZZ_SECONDS:-60}"
    ;;
esac
