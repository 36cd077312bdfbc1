"""Designs in Python: loading, reading and setting values by the key paths of `hallway sweep --vary`, and
a set-and-solve loop checked against a published formula and against `hallway sweep`."""

import csv

import numpy as np
import pytest

import hallway
from conftest import DESIGNS, run_cli

QPC = next(p for p in DESIGNS if "qpc" in p.stem)
COLLIDER = next(p for p in DESIGNS if "collider" in p.stem)

# CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)): exact since the 2019 SI.
E_C = 1.602176634e-19
H_JS = 6.62607015e-34


def test_get_returns_values_as_written():
    d = hallway.Design.from_file(str(QPC))
    assert d.get("gates.QS.voltage") == "-0.8 V"  # designs/01_hallbar_qpc.yaml
    assert d.get("constrictions.Q.transmission[1]") == "0.4"
    assert d.get("wiring.W") == "10 uV"  # a source's bias, without its role
    assert d.get("heterostructure.depth") == "95 nm"


def test_set_changes_only_the_value_and_keeps_the_role():
    d = hallway.Design.from_file(str(QPC))
    before = d.text
    d.set("wiring.W", "20 uV")
    d.set("gates.QS.voltage", "-0.75 V")
    assert d.get("wiring.W") == "20 uV" and d.get("gates.QS.voltage") == "-0.75 V"
    assert "W: source 20 uV" in d.text
    assert len(d.text.splitlines()) == len(before.splitlines())  # edited in place: lines keep their numbers


def test_from_string_and_copy_are_independent():
    text = QPC.read_text()
    d = hallway.Design.from_string(text, "my.yaml")
    assert d.path == "my.yaml" and d.text == text
    e = d.copy()
    e.set("gates.QN.voltage", "-0.7 V")
    assert d.get("gates.QN.voltage") == "-0.8 V" and e.get("gates.QN.voltage") == "-0.7 V"


def test_qpc_loop_follows_the_landauer_formula():
    # Two-terminal resistance across a QPC in the quantum Hall regime: R = h / (e^2 sum_n T_n)
    # (M. Buettiker, Phys. Rev. B 38, 9375 (1988)); the demo QPC passes channel 1 fully and channel 2
    # with T, so R = h / (e^2 (1 + T)).
    d = hallway.Design.from_file(str(QPC))
    for t in (0.1, 0.4, 0.9):
        d.set("constrictions.Q.transmission[1]", t)
        r = hallway.solve(d, fast=True)
        expected = H_JS / (E_C**2 * (1 + t))
        assert r.two_terminal_resistance_Ohm.W == pytest.approx(expected, rel=1e-12)  # 1e-12: linear solve
        assert r.conductance_S.shape == (len(r.contacts), len(r.contacts))


def test_set_loop_equals_hallway_sweep(tmp_path):
    # The same key path and values through `hallway sweep --vary` (self-consistency; the CSV keeps 10
    # significant digits, so agreement to 5e-10 relative).
    out = tmp_path / "sweep.csv"
    run_cli("sweep", QPC, "--vary", "constrictions.Q.transmission[1]=0.2:0.8:2", "--fast", "--quantities",
            "currents", "--threads", "1", "--quiet", "--output", out)
    rows = list(csv.DictReader(out.open()))
    assert len(rows) == 2
    d = hallway.Design.from_file(str(QPC))
    for row in rows:
        d.set("constrictions.Q.transmission[1]", row["constrictions.Q.transmission[1]"])
        currents = hallway.solve(d, fast=True).currents_A
        for contact, value in currents.items():
            assert float(row[f"I_{contact}_A"]) == pytest.approx(value, rel=5e-10, abs=1e-24)


def test_results_are_records_with_numpy_arrays():
    r = hallway.noise(str(COLLIDER), fast=True)
    assert isinstance(r, hallway.Record) and isinstance(r, dict)
    assert isinstance(r.noise_excess_A2_per_Hz, np.ndarray) and r.noise_excess_A2_per_Hz.ndim == 2
    assert r.noise_excess_A2_per_Hz.dtype == np.float64
    assert all(isinstance(m, str) for m in r.models)
    assert isinstance(r.colliders[0], hallway.Record) and "P" in r.colliders[0]
    assert "snr" in dir(r.cross_correlations[0])
    with pytest.raises(AttributeError):
        r.no_such_key
