"""The module's results are the CLI's JSON documents: same keys, same numbers to the last bit, for every
demo design in designs/ (self-consistency: both run the same library calls with the same options)."""

import numpy as np
import pytest

import hallway
from conftest import DESIGNS, assert_same, cli_json

DESIGN_IDS = [p.stem for p in DESIGNS]


def test_every_demo_design_is_covered():
    # The ladder of demo designs (README.md, "Demo designs"): three rungs at the time of writing.
    assert len(DESIGNS) >= 3


@pytest.mark.parametrize("design", DESIGNS, ids=DESIGN_IDS)
def test_check_equals_cli_json(tmp_path, design):
    assert_same(hallway.check(hallway.Design.from_file(design)), cli_json(tmp_path, "check", design))


@pytest.mark.parametrize("design", DESIGNS, ids=DESIGN_IDS)
def test_solve_fast_equals_cli_json(tmp_path, design):
    assert_same(hallway.solve(str(design), fast=True), cli_json(tmp_path, "solve", design, "--fast"))


@pytest.mark.parametrize("design", DESIGNS, ids=DESIGN_IDS)
def test_noise_fast_equals_cli_json(tmp_path, design):
    assert_same(hallway.noise(str(design), fast=True), cli_json(tmp_path, "noise", design, "--fast"))


@pytest.mark.parametrize("design", DESIGNS, ids=DESIGN_IDS)
def test_paths_fast_equals_cli_json(tmp_path, design):
    assert_same(hallway.paths(str(design), fast=True), cli_json(tmp_path, "paths", design, "--fast"))


def test_options_keep_their_cli_meaning(tmp_path):
    fp = next(p for p in DESIGNS if "fabry" in p.stem)
    assert_same(hallway.noise(str(fp), fast=True, field_reversed=True, phase=0.5, target=5,
                              collider_model="finite-temperature"),
                cli_json(tmp_path, "noise", fp, "--fast", "--field-reversed", "--phase", "0.5", "--target", "5",
                         "--collider-model", "finite-temperature"))
    qpc = next(p for p in DESIGNS if "qpc" in p.stem)
    assert_same(hallway.solve(str(qpc), fast=True, field_reversed=True),
                cli_json(tmp_path, "solve", qpc, "--fast", "--field-reversed"))
    assert_same(hallway.paths(str(qpc), fast=True, target=0.5, gate_limit="-1.5 V", relaxation_length=2e-6),
                cli_json(tmp_path, "paths", qpc, "--fast", "--target", "0.5", "--gate-limit", "-1.5 V",
                         "--relaxation-length", "2 um"))


def test_map_on_a_coarse_grid_equals_cli_json_and_csv(tmp_path):
    # The one self-consistent electrostatics test: a 200 nm whole-mesa grid keeps it to seconds.
    qpc = next(p for p in DESIGNS if "qpc" in p.stem)
    m = hallway.map(str(qpc), grid="200nm")
    csv = tmp_path / "map.csv"
    assert_same({k: v for k, v in m.items() if k not in ("x_m", "y_m", "density_per_m2", "filling",
                                                         "energy_over_fermi")},
                cli_json(tmp_path, "map", qpc, "--grid", "200nm", "--quiet", "--csv", csv))
    table = np.loadtxt(csv, delimiter=",", skiprows=1)
    nx, ny = m.solver.grid
    assert m.density_per_m2.shape == (ny, nx) and m.filling.shape == (ny, nx)
    # The CSV rounds to 7 significant digits ({:.6e}, half a unit in the last place is 5e-7 relative) and
    # the filling to 6 ({:.6g}, 5e-6): agreement to that rounding.
    xs, ys = np.meshgrid(m.x_m, m.y_m)
    for column, grid, rounding in ((0, xs, 5e-7), (1, ys, 5e-7), (2, m.density_per_m2, 5e-7), (3, m.filling, 5e-6)):
        np.testing.assert_allclose(table[:, column], grid.ravel(), rtol=rounding * 1.01, atol=1e-300)
