"""Shared fixtures of the Python module's tests (run by ctest as Python.Pytest, which sets PYTHONPATH to
the build tree's python/ folder and HALLWAY_EXE to the built `hallway` executable)."""

import json
import os
import pathlib
import subprocess

import numpy as np
import pytest

SOURCE_DIR = pathlib.Path(os.environ.get("HALLWAY_SOURCE_DIR", pathlib.Path(__file__).resolve().parents[2]))
DESIGNS = sorted((SOURCE_DIR / "designs").glob("*.yaml"))
# Timings differ from run to run; every other number must be equal to the last bit.
TIMING_KEYS = {"seconds"}


def _exe():
    exe = os.environ.get("HALLWAY_EXE")
    if not exe:
        pytest.skip("HALLWAY_EXE is not set (run the tests through ctest)")
    return exe


@pytest.fixture(scope="session")
def exe():
    return _exe()


def run_cli(*args, check=True):
    """Runs the `hallway` executable; returns the completed process."""
    proc = subprocess.run([_exe(), *map(str, args)], capture_output=True, text=True, timeout=300)
    if check and proc.returncode != 0:
        raise AssertionError(f"hallway {' '.join(map(str, args))} exited {proc.returncode}: {proc.stderr}")
    return proc


def cli_json(tmp_path, command, design, *options):
    """The document `hallway COMMAND DESIGN OPTIONS --json FILE` writes."""
    out = tmp_path / f"{command}.json"
    run_cli(command, design, *options, "--json", out)
    return json.loads(out.read_text())


def assert_same(module_value, cli_value, where="result"):
    """Exact equality of a module result with the CLI's JSON: same keys, same strings, and every number
    the same double (NumPy arrays compared element by element, as lists)."""
    if isinstance(module_value, np.ndarray):
        module_value = module_value.tolist()
    if isinstance(cli_value, dict):
        assert isinstance(module_value, dict), f"{where}: not an object"
        assert set(module_value) == set(cli_value), f"{where}: keys differ: {set(module_value) ^ set(cli_value)}"
        for key, value in cli_value.items():
            if key not in TIMING_KEYS:
                assert_same(module_value[key], value, f"{where}.{key}")
    elif isinstance(cli_value, list):
        assert isinstance(module_value, list) and len(module_value) == len(cli_value), f"{where}: length differs"
        for i, (m, c) in enumerate(zip(module_value, cli_value)):
            assert_same(m, c, f"{where}[{i}]")
    else:
        assert type(module_value) is type(cli_value) or {type(module_value), type(cli_value)} <= {int, float}, (
            f"{where}: {type(module_value).__name__} against {type(cli_value).__name__}")
        assert module_value == cli_value, f"{where}: {module_value!r} != {cli_value!r}"
