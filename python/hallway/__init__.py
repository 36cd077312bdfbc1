"""hallway for Python: design checks, edge transport, noise, electrostatics and path metrics of
quantum Hall devices, from a notebook or a script.

    import hallway
    d = hallway.Design.from_file("designs/02_two_source_collider.yaml")
    d.set("gates.QAS.voltage", "-0.45 V")          # any key path `hallway sweep --vary` takes
    r = hallway.noise(d, fast=True)
    r.cross_correlations[0].snr                     # the keys of `hallway noise --json`

Every function runs the same library calls with the same options as the command of the same name and
returns what that command writes with --json: a Record (a dict whose keys are also attributes) with
the same keys and the same numbers to the last bit; arrays of numbers are NumPy arrays in SI units
(the unit is in the key's name), objects are Records, lists of objects are lists of Records.
`map` adds the density grid (x_m, y_m, density_per_m2, filling, energy_over_fermi).

Errors are exceptions: DesignError (a mistake in the design; the message starts with
file:line:column: key, as the CLI prints it), ResourceLimit (the memory guard, or a solve stopped at
its iteration bound), UsageError (an option with a wrong value; also a ValueError), InternalError (a
value that is not finite). All derive from hallway.Error. Long calls release the GIL and print nothing.

All figures are model estimates (docs/models.md). A gate voltage past the leakage or breakdown onset
can destroy a sample; follow your lab's own safety rules.
"""

from __future__ import annotations

import os
from typing import Any, Callable, Optional, Union

from . import _core
from ._core import Design, DesignError, Error, InternalError, ResourceLimit, UsageError

__all__ = [
    "Design", "Record", "Error", "DesignError", "ResourceLimit", "UsageError", "InternalError",
    "check", "solve", "noise", "map", "paths", "parse_quantity",
]

DesignLike = Union[Design, str, "os.PathLike[str]"]
Number = Union[int, float]


class Record(dict):
    """A result or a part of one: a dict whose keys (the CLI's JSON keys) are also attributes."""

    __slots__ = ()

    def __getattr__(self, name: str) -> Any:
        try:
            return self[name]
        except KeyError:
            raise AttributeError(f"no key {name!r} in this result; keys: {', '.join(self)}") from None

    def __dir__(self):
        return sorted(set(super().__dir__()) | {k for k in self if k.isidentifier()})


def _wrap(x: Any) -> Any:
    if isinstance(x, dict):
        return Record({k: _wrap(v) for k, v in x.items()})
    if isinstance(x, list):
        return [_wrap(v) for v in x]
    return x


def _design(design: DesignLike) -> Design:
    if isinstance(design, Design):
        return design
    if isinstance(design, (str, os.PathLike)):
        return Design.from_file(os.fspath(design))
    raise TypeError("design must be a hallway.Design or the name of a design file")


def _quantity(value: Union[str, Number, None], unit: str, option: str) -> str:
    """An option as text: a str as given (with its unit), a number in SI with `unit` appended."""
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise TypeError(f"{option} must be a str with its unit or a number in SI")
    return f"{value!r} {unit}".strip()


def _memory(max_memory: Union[str, int, None]) -> str:
    if max_memory is None:
        return ""
    if isinstance(max_memory, bool):
        raise TypeError("max_memory must be a size such as '8GiB' or a number of bytes")
    return f"{max_memory}B" if isinstance(max_memory, int) else max_memory


def parse_quantity(text: str) -> tuple:
    """'-0.7 V' -> (-0.7, 'kg m^2 s^-3 A^-1'): the value in SI and its dimension, as the loader reads it."""
    return _core.parse_quantity(text)


def check(design: DesignLike, *, gate_settings: bool = False) -> Record:
    """`hallway check --json`: derived wafer figures (derived), channels, mesa, contacts, gates,
    constrictions (gap_m, pinch_off_bare_V, transmission_used, transmission_source, model,
    gate_settings), wiring, errors and warnings (code, message, where), ok, wiring_verdict. A design
    with errors is reported (ok False), not raised.

    gate_settings: also the gate voltage each constriction needs for its declared transmissions
    (--gate-settings; a few seconds per constriction)."""
    return _wrap(_core.check(_design(design), gate_settings))


def solve(design: DesignLike, *, fast: bool = False, field_reversed: bool = False,
          max_memory: Union[str, int, None] = None) -> Record:
    """`hallway solve --json`: for the design field, field_T, conductance_S (contacts x contacts),
    voltages_V and currents_A (by contact), two_terminal_resistance_Ohm, routes, warnings;
    reversed_field (the same for -B); wiring_verdict; paths, loops, constriction_models.

    fast: bare-potential boundaries instead of the self-consistent density (--fast).
    field_reversed: solve only the reversed field (--field-reversed).
    max_memory: largest electrostatic grid, '8GiB' or bytes (--max-memory; default 4 GiB)."""
    return _wrap(_core.solve(_design(design), fast, field_reversed, _memory(max_memory)))


def noise(design: DesignLike, *, fast: bool = False, field_reversed: bool = False,
          phase: Optional[float] = None, target: float = 10.0, collider_model: str = "zero-temperature",
          max_memory: Union[str, int, None] = None) -> Record:
    """`hallway noise --json`: noise_excess_A2_per_Hz and noise_total_A2_per_Hz (contacts x contacts),
    amplifiers (by contact: snr, time_for_target_s, ...), cross_correlations, colliders (P, S34_A2_per_Hz,
    ...), models (the model statements), warnings, wiring_verdict.

    phase: fix every interferometer loop's phase in rad instead of averaging (--phase).
    target: signal-to-noise asked of every correlation (--target, default 10).
    collider_model: 'zero-temperature' or 'finite-temperature' (--collider-model)."""
    options = _core.NoiseRun()
    options.field_reversed = field_reversed
    options.phase_rad = phase
    options.target_sigmas = target
    options.collider_model = collider_model
    return _wrap(_core.noise(_design(design), fast, options, _memory(max_memory)))


def paths(design: DesignLike, *, fast: bool = False, target: Union[str, Number, None] = None,
          gate_limit: Union[str, Number, None] = None, relaxation_length: Union[str, Number, None] = None,
          max_memory: Union[str, int, None] = None) -> Record:
    """`hallway paths --json`: paths (length_m, velocity, time of flight, thermal lengths), loops,
    constriction_models, source_paths, floating_contacts, field_T, warnings.

    target: transmission to reach at every constriction (--target, 0..1).
    gate_limit: most negative gate voltage to allow, '-1.5 V' or volts (--gate-limit, default -2 V).
    relaxation_length: source-to-splitter length that relaxes the beam, '1 um' or metres."""
    options = _core.PathsRun()
    options.target = _quantity(target, "", "target")
    options.gate_limit = _quantity(gate_limit, "V", "gate_limit")
    options.relaxation_length = _quantity(relaxation_length, "m", "relaxation_length")
    return _wrap(_core.paths(_design(design), fast, options, _memory(max_memory)))


def map(design: DesignLike, *, grid: Union[str, Number, None] = None, max_memory: Union[str, int, None] = None,
        progress: Union[bool, Callable[[int, int, str], None], None] = None) -> Record:
    """`hallway map --json`: gates (wide_depletion_V, depletion_V, lateral_depletion_m,
    drift_velocity_m_per_s), constrictions (gap_m, saddle_m, saddle_density_per_m2,
    pinch_off_density_zero_V, pinch_off_bare_V), solver; and the density grid of `map --csv`: x_m (nx),
    y_m (ny) cell centres, density_per_m2, filling and energy_over_fermi (ny x nx).

    grid: cell size of the whole-mesa grid, '25nm' or metres (--grid; default automatic).
    progress: True prints each stage on standard error; a callable gets (step, total, what)."""
    if progress is True:
        import sys

        def progress(step: int, total: int, what: str) -> None:
            print(f"map: {what} {step + 1}/{total}", file=sys.stderr, flush=True)
    elif progress is False:
        progress = None
    return _wrap(_core.map(_design(design), _quantity(grid, "m", "grid"), _memory(max_memory), progress))
