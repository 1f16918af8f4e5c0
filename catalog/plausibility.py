"""Plausibility of single values: what no datasheet of a working motor can state.

A relation residual (:mod:`catalog.derive`) needs a record to state a quantity twice.
A value can be wrong alone too: an inertia in oz·in² typed as oz·in·s² (386× too large),
a winding time constant longer than the motor's, a nominal point with more output
than input.  Each check here is one entry of :data:`CHECKS`: the field compared, a
limit computed from other fields of the same record (a function whose docstring gives
the physical argument), and whether the field must stay below or above it.  A value
beyond its limit by more than the tolerance is flagged like a contradiction, with the
limit in place of the implied value and residual (value − limit)/|limit|.

The checks see the record after the closure (given and derived values), and skip a
record where a derived value on the way went through a fragile solver.
"""
from __future__ import annotations

__all__ = ["Check", "CHECKS", "check_named", "implausible_values", "check_table_markdown", "COPPER_DENSITY",
           "WATER_DENSITY", "CONSTANT_CONVENTIONS_FACTOR"]

import inspect
import math
from dataclasses import dataclass

import numpy as np

from .derive import DEFAULT_TOLERANCE, FIELD_BITS, FRAGILE_SOURCE, DeriveResult, Findings, source_names

#: Density of copper at 20 °C [kg/m³] (CRC Handbook of Chemistry and Physics, 8.96 g/cm³; from
#: memory): the densest material a motor is made of in bulk (steel 7.87, NdFeB about 7.5).
COPPER_DENSITY = 8960.0
#: Density of water [kg/m³]: a motor of copper, iron and magnets, even a hollow outrunner, is
#: denser (common practice; the lightest small motors weigh about 2–4 g/cm³ of their envelope).
WATER_DENSITY = 1000.0
#: Largest factor between Kt and 1/Kv (SI) that a stated definition of the constants explains:
#: √2 (peak or RMS) times √3 (line-to-line or phase) for a brushless motor (textbook relation of
#: sinusoidal PM machines, Kt[N·m/A rms] = √3·Ke[V rms line-to-line·s/rad]; from memory).
CONSTANT_CONVENTIONS_FACTOR = math.sqrt(6.0)


def solid_cylinder_inertia(mass, diameter):
    """Upper limit of the rotor inertia [kg·m²]: a solid cylinder of the whole motor's mass and
    diameter, m·D²/8.

    The rotor is part of the motor's mass and turns inside its outer diameter; a solid
    cylinder of all of that mass is more inertia than any inner rotor can have (J = m·r²/2,
    any mechanics textbook).  An inertia beyond it is a unit slip: oz·in² read as oz·in·s²
    (a factor of g0/(in/s²) = 386), g·cm² as kg·cm², or a diameter in the wrong unit.
    """
    return mass * diameter * diameter / 8.0


def motor_thermal_time_constant(thermal_time_constant_motor):
    """Upper limit of the winding's thermal time constant [s]: the motor's.

    The winding is a small part of the motor's heat capacity and sits behind a smaller
    thermal resistance (winding to housing) than the housing to ambient, so it warms
    faster than the whole motor (two-node thermal network; datasheets give τw of seconds
    to a minute and τmotor of minutes).  A winding constant above the motor's means the
    two were swapped or one has the wrong unit (min read as s).
    """
    return thermal_time_constant_motor


def nominal_input_current(nominal_torque, nominal_speed, nominal_voltage):
    """Lower limit of the nominal current [A]: the current whose electrical power V·I equals the
    mechanical output Tn·ωn at the nominal point.

    Energy is conserved: a motor cannot deliver more mechanical power than it draws, so
    V·In ≥ Tn·ωn (efficiency at most 1).  A nominal current below this is a typo or a
    current of another operating point.
    """
    return nominal_torque * nominal_speed / nominal_voltage


def nominal_point_efficiency(nominal_torque, nominal_speed, nominal_voltage, nominal_current):
    """Lower limit of the maximum efficiency [1]: the efficiency Tn·ωn/(V·In) of the nominal point.

    The maximum efficiency is the largest efficiency on the speed-torque line at nominal
    voltage, so no point of that line, the nominal one included, can be more efficient.
    """
    return nominal_torque * nominal_speed / (nominal_voltage * nominal_current)


def speed_constant_upper(torque_constant):
    """Upper limit of the speed constant [(rad/s)/V]: √6/Kt.

    In SI Kv·Kt = 1 (power balance E·I = T·ω with Kt = Ke = 1/Kv), i.e. 60/(2π) =
    9.549 rpm/V·N·m/A.  A brushless datasheet may state the constants on another basis
    (peak or RMS, line-to-line or phase), which moves the product by √2, √3 or √6 at most;
    beyond that it is a unit mix-up (rpm read as rad/s: 2π; per second read as per
    minute: 60).
    """
    return CONSTANT_CONVENTIONS_FACTOR / torque_constant


def speed_constant_lower(torque_constant):
    """Lower limit of the speed constant [(rad/s)/V]: 1/(√6·Kt).

    Kv·Kt = 1 in SI (as :func:`speed_constant_upper`); a definition of the constants moves
    the product by √6 at most either way, so a smaller one is a unit mix-up (rad/s read as
    rpm: 1/(2π); per minute read as per second: 1/60).
    """
    return 1.0 / (CONSTANT_CONVENTIONS_FACTOR * torque_constant)


def nominal_current_limit(nominal_current):
    """Upper limit of the no-load current [A]: the nominal current.

    The no-load current only overcomes friction and iron losses; the nominal current adds
    the current of the nominal torque (I = T/Kt + I0), so it is larger.  A no-load current
    at or above it leaves no torque at the nominal point.
    """
    return nominal_current


def stall_torque_limit(stall_torque):
    """Upper limit of the nominal torque [N·m]: the stall torque.

    On the speed-torque line the torque is largest at standstill; the nominal point, a
    point of that line at nominal voltage, turns and so delivers less.
    """
    return stall_torque


def no_load_speed_limit(no_load_speed):
    """Upper limit of the nominal speed [rad/s]: the no-load speed.

    The speed falls along the speed-torque line from its no-load value as torque rises;
    the nominal point carries torque, so it turns slower than at no load.
    """
    return no_load_speed


def copper_block_mass(diameter, length):
    """Upper limit of the mass [kg]: a solid copper cylinder of the motor's diameter and length.

    No motor is denser than its densest bulk material (:data:`COPPER_DENSITY`).  A mass
    above it is a unit slip (lb as kg, g read as kg) or a diameter or length in the wrong unit.
    """
    return COPPER_DENSITY * math.pi / 4.0 * diameter * diameter * length


def water_block_mass(diameter, length):
    """Lower limit of the mass [kg]: a cylinder of water of the motor's diameter and length.

    A motor is copper, iron and magnet in a housing; even a hollow outrunner is several
    times denser than water (:data:`WATER_DENSITY`).  A mass below it is a unit slip (kg
    read as g) or a diameter or length too large (cm read as mm the other way round).
    """
    return WATER_DENSITY * math.pi / 4.0 * diameter * diameter * length


@dataclass(frozen=True)
class Check:
    """``field`` must stay below (``upper``) or above a limit that ``limit`` computes from the
    fields named by its parameters; ``name`` is the text a flag carries."""

    name: str
    field: str
    limit: object
    upper: bool = True

    @property
    def inputs(self) -> tuple:
        return tuple(inspect.signature(self.limit).parameters)

    @property
    def fields(self) -> tuple:
        return (self.field, *self.inputs)


CHECKS: tuple = (
    Check("rotor inertia at most a solid cylinder of the motor's mass and diameter", "rotor_inertia",
          solid_cylinder_inertia),
    Check("winding thermal time constant at most the motor's", "thermal_time_constant_winding",
          motor_thermal_time_constant),
    Check("nominal input power at least the nominal output power", "nominal_current",
          nominal_input_current, upper=False),
    Check("maximum efficiency at least the efficiency of the nominal point", "max_efficiency",
          nominal_point_efficiency, upper=False),
    Check("speed constant × torque constant at most √6 (SI)", "speed_constant", speed_constant_upper),
    Check("speed constant × torque constant at least 1/√6 (SI)", "speed_constant", speed_constant_lower,
          upper=False),
    Check("no-load current below the nominal current", "no_load_current", nominal_current_limit),
    Check("nominal torque below the stall torque", "nominal_torque", stall_torque_limit),
    Check("nominal speed below the no-load speed", "nominal_speed", no_load_speed_limit),
    Check("mass at most that of a copper cylinder of the motor's size", "mass", copper_block_mass),
    Check("mass at least that of a water cylinder of the motor's size", "mass", water_block_mass, upper=False),
)

_BY_NAME = {c.name: c for c in CHECKS}


def check_named(name: str):
    """The :class:`Check` whose flags carry ``name``, or None (a relation's flag)."""
    return _BY_NAME.get(name)


def implausible_values(result: DeriveResult, tolerance: float = DEFAULT_TOLERANCE) -> Findings:
    """Every value of ``result`` beyond its :data:`CHECKS` limit by more than ``tolerance``."""
    cols, parts = result.columns, []
    n = len(next(iter(cols.values()))) if cols else 0
    for check in CHECKS:
        if any(name not in cols for name in check.fields):
            continue
        known = np.ones(n, dtype=bool)
        for name in check.fields:
            known &= ~np.isnan(cols[name])
        if not known.any():
            continue
        idx = np.flatnonzero(known)
        with np.errstate(all="ignore"):
            limit = np.broadcast_to(np.asarray(check.limit(*(cols[name][idx] for name in check.inputs)),
                                               dtype=float), idx.shape)
            value = cols[check.field][idx]
            res = (value - limit) / np.abs(limit)
        beyond = (res > tolerance) if check.upper else (res < -tolerance)
        sources = np.zeros(len(idx), dtype=np.uint64)
        for name in check.fields:
            sources |= result.sources[name][idx]
        beyond &= (sources & FRAGILE_SOURCE) == 0
        if not beyond.any():
            continue
        rows = np.flatnonzero(beyond)
        parts.append(Findings(idx[rows], np.full(len(rows), check.name, dtype=object),
                              np.full(len(rows), check.field, dtype=object), source_names(sources[rows]),
                              value[rows], limit[rows], res[rows]))
    return Findings.concat(parts)


def check_table_markdown() -> str:
    """The plausibility checks as Markdown (documentation is generated from :data:`CHECKS`)."""
    lines = ["| check | field | must stay | the limit | why |", "|---|---|---|---|---|"]
    for c in CHECKS:
        limit, why = (" ".join(part.split()) for part in inspect.getdoc(c.limit).split("\n\n")[:2])
        lines.append(f"| {c.name} | {c.field} | {'below' if c.upper else 'above'} | {limit} | {why} |")
    return "\n".join(lines)


assert all(name in FIELD_BITS for c in CHECKS for name in c.fields), "a check names a field that is not numeric"
