"""Every error class of the module, each with the message the CLI prints for the same mistake."""

import math

import pytest

import hallway
from conftest import DESIGNS, SOURCE_DIR, run_cli

INVALID = SOURCE_DIR / "designs" / "invalid"
QPC = next(p for p in DESIGNS if "qpc" in p.stem)
CLI_DESIGN_ERROR = "hallway: design error: "


def cli_errors(*args):
    """The design-error lines the CLI prints (without its prefix), and its exit code."""
    proc = run_cli(*args, check=False)
    lines = [l[len(CLI_DESIGN_ERROR):] for l in proc.stderr.splitlines() if l.startswith(CLI_DESIGN_ERROR)]
    return lines, proc.returncode


def test_error_classes_form_one_family():
    for cls in (hallway.DesignError, hallway.ResourceLimit, hallway.UsageError, hallway.InternalError):
        assert issubclass(cls, hallway.Error) and cls.__module__ == "hallway"
    assert issubclass(hallway.UsageError, ValueError)


@pytest.mark.parametrize("name", ["bare_number", "transmission_count", "unwired_contact", "self_intersecting_gate"])
def test_loader_error_carries_the_cli_message(name):
    design = INVALID / f"{name}.yaml"
    lines, code = cli_errors("check", design)
    assert code == 1 and len(lines) == 1  # README.md, "Exit codes": 1 for a design error
    with pytest.raises(hallway.DesignError) as e:
        hallway.Design.from_file(str(design))
    assert str(e.value) == lines[0]
    assert lines[0].startswith(f"{design}:{e.value.line}:{e.value.column}: {e.value.key}: ")
    assert e.value.file == str(design) and e.value.line > 0


@pytest.mark.parametrize("name", ["gates_overlap", "contact_off_mesa"])
def test_check_errors_refuse_to_solve_with_the_cli_messages(name):
    design = INVALID / f"{name}.yaml"
    lines, code = cli_errors("solve", "--fast", design)
    assert code == 1 and lines
    d = hallway.Design.from_file(str(design))  # loads: the mistakes are geometric
    assert hallway.check(d).ok is False
    with pytest.raises(hallway.DesignError) as e:
        hallway.solve(d, fast=True)
    assert str(e.value).splitlines() == lines
    assert [f["where"]["line"] for f in e.value.findings] == [int(l.split(":")[1]) for l in lines]
    assert e.value.line == e.value.findings[0]["where"]["line"]


def test_a_bad_value_is_refused_and_leaves_the_design_unchanged():
    d = hallway.Design.from_file(str(QPC))
    before = d.text
    with pytest.raises(hallway.DesignError) as e:
        d.set("gates.QS.voltage", "5")  # a voltage without its unit
    assert e.value.key == "gates[0].voltage" and e.value.line == 28  # designs/01_hallbar_qpc.yaml, line 28
    assert str(e.value).startswith(f"{QPC}:28:")
    with pytest.raises(hallway.DesignError, match="no object named 'QX'"):
        d.set("gates.QX.voltage", "-0.5 V")
    with pytest.raises(hallway.DesignError, match="out of range"):
        d.set("constrictions.Q.transmission[5]", 0.5)
    with pytest.raises(hallway.DesignError):
        d.get("gates.QS.colour")
    with pytest.raises(TypeError):
        d.set("gates.QS.voltage", True)
    assert d.text == before


def test_design_text_errors_name_line_and_column():
    with pytest.raises(hallway.DesignError) as e:
        hallway.Design.from_string("hallway: 1\nname: [unclosed\n", "broken.yaml")
    assert e.value.file == "broken.yaml" and e.value.line >= 2
    with pytest.raises(hallway.DesignError, match="no_such_file.yaml"):
        hallway.Design.from_file(str(SOURCE_DIR / "no_such_file.yaml"))


def test_memory_guard_raises_resource_limit():
    # The CLI exits 5 on the same grid (README.md, "Exit codes").
    assert run_cli("map", QPC, "--grid", "1nm", "--max-memory", "1MiB", check=False).returncode == 5
    with pytest.raises(hallway.ResourceLimit) as e:
        hallway.map(str(QPC), grid="1nm", max_memory="1MiB")
    assert e.value.limit_bytes == 1 << 20 and e.value.need_bytes > e.value.limit_bytes
    assert e.value.fitting_cell_m > 1e-9 and "grid=" in str(e.value)
    with pytest.raises(hallway.ResourceLimit) as e:
        hallway.solve(str(QPC), max_memory=1 << 20)
    assert e.value.need_bytes > e.value.limit_bytes == 1 << 20 and "fast=True" in str(e.value)


def test_bad_options_raise_usage_error():
    proc = run_cli("solve", QPC, "--fast", "--max-memory", "lots", check=False)
    assert proc.returncode == 2  # README.md, "Exit codes": 2 for a usage error
    with pytest.raises(hallway.UsageError) as e:
        hallway.solve(str(QPC), fast=True, max_memory="lots")
    assert str(e.value).startswith("max_memory 'lots': ")
    assert "hallway: usage error: --" + str(e.value).replace("max_memory", "max-memory", 1) in proc.stderr
    cases = [
        lambda: hallway.map(str(QPC), grid="5 V"),
        lambda: hallway.map(str(QPC), grid="20 um"),  # beyond the 10 um the CLI allows
        lambda: hallway.noise(str(QPC), fast=True, collider_model="warm"),
        lambda: hallway.noise(str(QPC), fast=True, phase=math.nan),
        lambda: hallway.noise(str(QPC), fast=True, target=0),
        lambda: hallway.paths(str(QPC), fast=True, target=1.5),
        lambda: hallway.paths(str(QPC), fast=True, gate_limit="-1 m"),
    ]
    for case in cases:
        with pytest.raises(hallway.UsageError) as e:
            case()
        assert isinstance(e.value, ValueError)
