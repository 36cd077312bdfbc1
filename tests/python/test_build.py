"""The module as a user gets it: imported from the build tree, installed by `cmake --install`, calls that
release the GIL, and the example script of README.md."""

import os
import pathlib
import subprocess
import sys
import threading

import pytest

import hallway
from conftest import DESIGNS, SOURCE_DIR

QPC = next(p for p in DESIGNS if "qpc" in p.stem)


def test_imported_from_the_build_tree():
    build = os.environ.get("HALLWAY_BUILD_DIR")
    if not build:
        pytest.skip("HALLWAY_BUILD_DIR is not set (run the tests through ctest)")
    assert pathlib.Path(hallway.__file__).resolve().is_relative_to(pathlib.Path(build).resolve())
    # README.md, "Python": PYTHONPATH=BUILD/python
    env = dict(os.environ, PYTHONPATH=str(pathlib.Path(build) / "python"))
    out = subprocess.run([sys.executable, "-c", "import hallway; print(hallway.__file__)"], env=env,
                         capture_output=True, text=True, check=True).stdout
    assert pathlib.Path(out.strip()).parent == pathlib.Path(build, "python", "hallway")


def test_imported_after_install(tmp_path):
    build, cmake = os.environ.get("HALLWAY_BUILD_DIR"), os.environ.get("CMAKE_COMMAND")
    site = os.environ.get("HALLWAY_PYTHON_INSTALL_DIR")
    if not (build and cmake and site):
        pytest.skip("run through ctest (HALLWAY_BUILD_DIR, CMAKE_COMMAND, HALLWAY_PYTHON_INSTALL_DIR)")
    subprocess.run([cmake, "--install", build, "--prefix", str(tmp_path)], check=True, capture_output=True)
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env["PYTHONPATH"] = str(tmp_path / site)
    script = ("import hallway; d = hallway.Design.from_file(%r); "
              "print(hallway.__file__); print(hallway.check(d).ok)" % str(QPC))
    out = subprocess.run([sys.executable, "-c", script], env=env, capture_output=True, text=True,
                         check=True, cwd=tmp_path).stdout.split()
    assert pathlib.Path(out[0]).is_relative_to(tmp_path) and out[1] == "True"


def test_long_calls_release_the_gil():
    # While `map` runs in a thread, this thread keeps running Python: with the GIL held for the whole
    # call it would get no turn between the progress callbacks.
    done = threading.Event()
    stages = []
    result = {}

    def work():
        result["map"] = hallway.map(str(QPC), grid="200nm", progress=lambda k, n, what: stages.append(what))
        done.set()

    worker = threading.Thread(target=work)
    worker.start()
    while not stages and not done.is_set():  # until the solve has started
        pass
    turns = 0
    while not done.is_set():
        turns += 1
    worker.join()
    assert result["map"].solver.converged and len(stages) >= 2
    assert turns > 10000  # seconds of solving: millions of turns when the GIL is free, a handful when held


def test_readme_example_runs():
    example = SOURCE_DIR / "python" / "examples" / "collider_sweep.py"
    out = subprocess.run([sys.executable, str(example)], capture_output=True, text=True, check=True).stdout
    lines = out.splitlines()
    assert lines[0].split()[0] == "T(QA,QB)" and len(lines) >= 6
    # The demo's design value T = 0.95 gives the SNR README.md quotes for `hallway noise` (4.22).
    row = next(l for l in lines if l.split()[0] == "0.95")
    assert row.split()[-3] == "4.22"
