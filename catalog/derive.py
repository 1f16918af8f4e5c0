"""Derivation of missing motor constants, with provenance, and consistency residuals.

The physical relations of the linear DC motor are kept as data: :data:`EQUATIONS`
lists each relation once, with the fields it ties together and a solver for every
field it can be solved for (plain functions of :mod:`catalog.physics`).  The
closure walks the table over whole columns (numpy), filling a missing field
wherever all the inputs of one of its solvers are present, repeatedly until nothing
more follows.  Where a record gives every field of a relation, the relation is
over-determined and its relative residual is computed: a large one is a datasheet
typo or a different definition.

Every derived value is recomputed from the given values only, so deriving twice
changes nothing, and a given value is never replaced.

Nothing here reads or writes the catalogue: columns in, columns out.  Storing the
derived values, their history and the residuals is :mod:`catalog.store.derived`.
"""
from __future__ import annotations

__all__ = ["Equation", "Solver", "EQUATIONS", "DERIVABLE", "SOLVERS", "SOLVER_RELATIONS",
           "ASSUMED_REFERENCE_TEMPERATURE", "max_continuous_current_at_rating_ambient", "DeriveResult",
           "derive_columns", "residuals", "Flag", "DEFAULT_TOLERANCE", "RATING_AMBIENT",
           "DEFAULT_REFERENCE_TEMPERATURE", "relation_table_markdown"]

from dataclasses import dataclass, field

import numpy as np

from . import physics as P

#: Relative residual above which an over-determined relation is flagged.
DEFAULT_TOLERANCE = 0.10
#: Ambient temperature for the catalogue's continuous ratings [K] (25 °C).
RATING_AMBIENT = 298.15
#: Resistance reference temperature assumed when a datasheet does not state it [K] (25 °C).
DEFAULT_REFERENCE_TEMPERATURE = 298.15


@dataclass(frozen=True)
class Solver:
    """``output = func(*inputs)``; ``inputs`` are canonical field names."""

    output: str
    inputs: tuple
    func: object
    fragile: bool = False  # a small difference of large rounded numbers: used only as a last resort


@dataclass(frozen=True)
class Equation:
    """A physical relation between catalogue fields, solvable for several of them.

    The first solver is the relation's primary form, used for the residual.
    ``dc_constants`` marks relations that need Kt and Ke on the same (DC-equivalent)
    basis: they are skipped for brushless records stated line-to-line.
    """

    name: str
    solvers: tuple
    dc_constants: bool = False

    @property
    def fields(self) -> tuple:
        out = [self.solvers[0].output, *self.solvers[0].inputs]
        for s in self.solvers[1:]:
            for f in (s.output, *s.inputs):
                if f not in out:
                    out.append(f)
        return tuple(out)


def _s(output: str, func, fragile: bool = False, **bind) -> Solver:
    """The solver ``output = func(...)``.

    Its inputs are the names of ``func``'s required parameters, which are schema field
    names; a parameter of an operating quantity (``supply_voltage``, ``torque``,
    ``current``, ``speed``) is bound to the datasheet field it takes here by ``bind``.
    """
    import inspect

    params = [p.name for p in inspect.signature(func).parameters.values()
              if p.default is inspect.Parameter.empty and p.kind is p.POSITIONAL_OR_KEYWORD]
    unknown = set(bind) - set(params)
    if unknown:
        raise TypeError(f"{func.__name__} has no parameter {sorted(unknown)}")
    return Solver(output, tuple(bind.get(name, name) for name in params), func, fragile)


def max_continuous_current_at_rating_ambient(max_winding_temperature, terminal_resistance,
                                             thermal_resistance_winding_housing,
                                             thermal_resistance_housing_ambient,
                                             resistance_reference_temperature):
    """The catalogue's maximum continuous current [A]: the steady current that brings the
    winding to ``max_winding_temperature`` at the rating ambient :data:`RATING_AMBIENT`
    (:func:`catalog.physics.max_continuous_current` with the ambient fixed)."""
    return P.max_continuous_current(max_winding_temperature, terminal_resistance,
                                    thermal_resistance_winding_housing, thermal_resistance_housing_ambient,
                                    RATING_AMBIENT, resistance_reference_temperature)


#: The datasheet's own operating point: its characteristic values hold at the nominal voltage.
_AT_NOMINAL_VOLTAGE = {"supply_voltage": "nominal_voltage"}

EQUATIONS: tuple = (
    Equation("torque constant = back-EMF constant (SI)", (
        _s("torque_constant", P.torque_constant_from_back_emf_constant),
        _s("back_emf_constant", P.back_emf_constant_from_torque_constant)), dc_constants=True),
    Equation("speed constant = 1/back-EMF constant", (
        _s("speed_constant", P.speed_constant_from_back_emf_constant),
        _s("back_emf_constant", P.back_emf_constant_from_speed_constant)), dc_constants=True),
    Equation("torque constant = 1/speed constant (SI)", (
        _s("torque_constant", P.torque_constant_from_speed_constant),
        _s("speed_constant", P.speed_constant_from_torque_constant)), dc_constants=True),
    Equation("stall current = V/R", (
        _s("stall_current", P.stall_current, **_AT_NOMINAL_VOLTAGE),
        _s("terminal_resistance", P.resistance_from_stall_current, **_AT_NOMINAL_VOLTAGE),
        _s("nominal_voltage", P.supply_voltage_from_stall_current))),
    Equation("stall torque = Kt·(Is − I0)", (
        _s("stall_torque", P.stall_torque),
        _s("torque_constant", P.torque_constant_from_stall),
        _s("stall_current", P.stall_current_from_stall_torque),
        _s("no_load_current", P.no_load_current_from_stall, fragile=True))),
    Equation("no-load speed = (V − R·I0)/Ke", (
        _s("no_load_speed", P.no_load_speed, **_AT_NOMINAL_VOLTAGE),
        _s("back_emf_constant", P.back_emf_constant_from_no_load_speed, **_AT_NOMINAL_VOLTAGE),
        _s("no_load_current", P.no_load_current_from_no_load_speed, fragile=True, **_AT_NOMINAL_VOLTAGE),
        _s("terminal_resistance", P.resistance_from_no_load_speed, fragile=True, **_AT_NOMINAL_VOLTAGE),
        _s("nominal_voltage", P.supply_voltage_from_no_load_speed))),
    Equation("speed-torque gradient = no-load speed/stall torque", (
        _s("speed_torque_gradient", P.speed_torque_gradient_from_no_load_speed_and_stall_torque),
        _s("stall_torque", P.stall_torque_from_no_load_speed_and_gradient),
        _s("no_load_speed", P.no_load_speed_from_stall_torque_and_gradient)), dc_constants=True),
    Equation("speed-torque gradient = R/(Kt·Ke)", (
        _s("speed_torque_gradient", P.speed_torque_gradient),
        _s("terminal_resistance", P.resistance_from_speed_torque_gradient),
        _s("torque_constant", P.torque_constant_from_speed_torque_gradient)), dc_constants=True),
    Equation("friction torque = Kt·I0", (
        _s("friction_torque", P.friction_torque),
        _s("no_load_current", P.no_load_current_from_friction_torque),
        _s("torque_constant", P.torque_constant_from_friction_torque))),
    Equation("mechanical time constant = J·gradient", (
        _s("mechanical_time_constant", P.mechanical_time_constant_from_gradient),
        _s("rotor_inertia", P.rotor_inertia_from_gradient))),
    Equation("electrical time constant = L/R", (
        _s("electrical_time_constant", P.electrical_time_constant),
        _s("terminal_inductance", P.inductance_from_electrical_time_constant),
        _s("terminal_resistance", P.resistance_from_electrical_time_constant))),
    Equation("motor constant = Kt/√R", (
        _s("motor_constant", P.motor_constant),
        _s("terminal_resistance", P.resistance_from_motor_constant),
        _s("torque_constant", P.torque_constant_from_motor_constant))),
    Equation("maximum efficiency = (1 − √(I0/Is))²", (
        _s("max_efficiency", P.max_efficiency),
        _s("no_load_current", P.no_load_current_from_max_efficiency),
        _s("stall_current", P.stall_current_from_max_efficiency))),
    Equation("maximum output power = (V − R·I0)²/(4R)", (
        _s("max_output_power", P.max_output_power, **_AT_NOMINAL_VOLTAGE),)),
    Equation("nominal current = (Tn + Kt·I0)/Kt", (
        _s("nominal_current", P.current_at_torque, torque="nominal_torque"),
        _s("nominal_torque", P.torque_at_current, current="nominal_current"))),
    Equation("nominal speed on the speed-torque line", (
        _s("nominal_speed", P.speed_at_torque, torque="nominal_torque", **_AT_NOMINAL_VOLTAGE),
        _s("nominal_torque", P.torque_at_speed, speed="nominal_speed", **_AT_NOMINAL_VOLTAGE)),
        dc_constants=True),
    Equation("maximum continuous current, thermal model at 25 °C ambient", (
        _s("max_continuous_current", max_continuous_current_at_rating_ambient),)),
    Equation("maximum continuous torque = Kt·(Icont − I0)", (
        _s("max_continuous_torque", P.torque_at_current, current="max_continuous_current"),)),
    Equation("mechanical time constant = J·R/(Kt·Ke)", (
        _s("mechanical_time_constant", P.mechanical_time_constant),
        _s("rotor_inertia", P.rotor_inertia_from_mechanical_time_constant)), dc_constants=True),
    Equation("maximum output power = no-load speed·stall torque/4", (
        _s("max_output_power", P.max_output_power_from_no_load_speed_and_stall_torque),
        _s("no_load_speed", P.no_load_speed_from_max_output_power),
        _s("stall_torque", P.stall_torque_from_max_output_power))),
    Equation("current at maximum efficiency = √(I0·Is)", (
        _s("max_efficiency_current", P.max_efficiency_current),
        _s("no_load_current", P.no_load_current_from_max_efficiency_current),
        _s("stall_current", P.stall_current_from_max_efficiency_current))),
)

#: Fields every solver may produce must be numeric motor fields; checked in the tests.
DERIVABLE = tuple(sorted({s.output for e in EQUATIONS for s in e.solvers}))


#: The resistance reference temperature assumed where a datasheet states none, recorded as a
#: derivation without inputs (see :func:`derive_columns`).
ASSUMED_REFERENCE_TEMPERATURE = Solver("resistance_reference_temperature", (), None)
#: Every solver, numbered: the codes of :attr:`DeriveResult.codes`.
SOLVERS = (*(s for e in EQUATIONS for s in e.solvers), ASSUMED_REFERENCE_TEMPERATURE)
#: The relation text of each solver of :data:`SOLVERS`, by code (what the store records).
SOLVER_RELATIONS = (*(e.name for e in EQUATIONS for _ in e.solvers),
                    "assumed datasheet reference temperature 25 °C")
_SOLVER_NAMES = dict(zip(SOLVERS, SOLVER_RELATIONS))
#: Inputs a solver may use although the datasheet leaves them out, with the value meant then.
_ASSUMED_INPUTS = {ASSUMED_REFERENCE_TEMPERATURE.output: DEFAULT_REFERENCE_TEMPERATURE}
_SOLVER_CODES = {id(s): k for k, s in enumerate(SOLVERS)}


class _EquationNames:
    """field -> object array of the relation name of each derived cell (built on demand)."""

    def __init__(self, origin):
        self._origin = origin

    def __getitem__(self, name):
        return np.array([None if s is None else _SOLVER_NAMES[s] for s in self._origin[name]], dtype=object)

    def get(self, name, default=None):
        return self[name] if name in self._origin else default


@dataclass
class DeriveResult:
    """Columns after derivation plus, per derived cell, the solver that made it."""

    columns: dict  # field -> float ndarray (given and derived)
    origin: dict  # field -> object ndarray: None (given/missing) or Solver
    equation: dict = field(default_factory=dict)  # field -> object ndarray of equation names
    codes: dict = field(default_factory=dict)  # field -> int16 ndarray: -1 or the index in SOLVERS

    def derived_count(self) -> int:
        return int(sum(np.count_nonzero(o != None) for o in self.origin.values()))  # noqa: E711


def _dc_basis_mask(text_columns: dict, n: int) -> np.ndarray:
    """True where Kt and Ke may be taken as equal (not a line-to-line brushless value)."""
    basis = text_columns.get("constant_basis")
    if basis is None:
        return np.ones(n, dtype=bool)
    b = np.asarray(basis, dtype=object)
    return ~np.isin(b, ["line-to-line-peak", "line-to-line-rms"])


def _valid(values: np.ndarray, output: str) -> np.ndarray:
    """Results a solver may store: finite, and positive (zero allowed where the schema allows)."""
    from .fields import fields_for

    f = fields_for("motor")[output]
    ok = np.isfinite(values)
    if f.exclusive_minimum is not None:
        ok &= values > f.exclusive_minimum
    if f.minimum is not None:
        ok &= values >= f.minimum
    if f.maximum is not None:
        ok &= values <= f.maximum
    return ok


def derive_columns(columns: dict, text_columns: dict | None = None, n: int | None = None,
                   max_passes: int = 20) -> DeriveResult:
    """Fill every derivable field that follows from the present ones.

    Parameters
    ----------
    columns : dict
        Field name -> float array of given SI values (NaN = missing).  Arrays are
        not modified.
    text_columns : dict, optional
        Field name -> text array (``constant_basis`` is used).
    """
    text_columns = text_columns or {}
    if n is None:
        n = len(next(iter(columns.values()))) if columns else 0
    cols = {}
    for name in {f for e in EQUATIONS for f in e.fields} | set(columns):
        arr = columns.get(name)
        cols[name] = np.full(n, np.nan) if arr is None else np.array(arr, dtype=float, copy=True)
    origin = {name: np.full(n, None, dtype=object) for name in cols}
    codes = {name: np.full(n, -1, dtype=np.int16) for name in cols}
    dc_ok = _dc_basis_mask(text_columns, n)
    tref_given = ~np.isnan(cols["resistance_reference_temperature"])

    def apply(fragile: bool) -> bool:
        changed = False
        for eq in EQUATIONS:
            for solver in eq.solvers:
                if solver.fragile != fragile:
                    continue
                out = cols[solver.output]
                need = np.isnan(out)
                if eq.dc_constants:
                    need &= dc_ok
                for name in solver.inputs:
                    if name not in _ASSUMED_INPUTS:
                        need &= ~np.isnan(cols[name])
                if not need.any():
                    continue
                idx = np.flatnonzero(need)
                args = [cols[name][idx] if name not in _ASSUMED_INPUTS else
                        np.where(np.isnan(cols[name][idx]), _ASSUMED_INPUTS[name], cols[name][idx])
                        for name in solver.inputs]
                with np.errstate(all="ignore"):
                    values = np.asarray(solver.func(*args), dtype=float)
                values = np.broadcast_to(values, idx.shape)
                ok = _valid(values, solver.output)
                if ok.any():
                    out[idx[ok]] = values[ok]
                    origin[solver.output][idx[ok]] = solver
                    codes[solver.output][idx[ok]] = _SOLVER_CODES[id(solver)]
                    changed = True
        return changed

    # well-conditioned relations first; a fragile one only when nothing else follows
    for _ in range(max_passes):
        if not apply(False) and not apply(True):
            break
    # record the assumed reference temperature as a derived value where it was used: the
    # resistance reference temperature defaults to 25 °C wherever a resistance is known,
    # given or derived (checked after the closure, which already used the default)
    assumed = ASSUMED_REFERENCE_TEMPERATURE
    missing = ~tref_given & ~np.isnan(cols["terminal_resistance"])
    cols[assumed.output] = np.where(missing, DEFAULT_REFERENCE_TEMPERATURE, cols[assumed.output])
    origin[assumed.output][missing] = assumed
    codes[assumed.output][missing] = _SOLVER_CODES[id(assumed)]
    equation = _EquationNames(origin)
    return DeriveResult(cols, origin, equation, codes)


@dataclass(frozen=True)
class Flag:
    """One over-determined relation whose given values disagree."""

    record_id: str
    relation: str
    field: str
    given: str  # "field=value, ..." of the given values (SI)
    given_value: float
    implied_value: float
    residual: float

    def __str__(self) -> str:
        return self.describe("datasheet")

    def describe(self, preset: str = "datasheet") -> str:
        """The flag as one line, values in the display ``preset`` (si, datasheet, imperial)."""
        def show(name, value):
            from .fields import fields_for
            from .present import display_value

            f = fields_for("motor").get(name)
            if f is None or f.dimension is None:
                return f"{value:.5g}"
            v, label = display_value(value, f.dimension, preset, field=f)
            return f"{v:.5g} {label}".strip()

        parts = []
        for item in self.given.split(", ") if self.given else []:
            name, _, value = item.partition("=")
            try:
                parts.append(f"{name} {show(name, float(value))}")
            except ValueError:
                parts.append(item)
        return (f"{self.record_id}: {self.relation}: {self.field} given {show(self.field, self.given_value)}, "
                f"the other values imply {show(self.field, self.implied_value)} ({self.residual:+.1%}); "
                f"given {', '.join(parts)}")


def residuals(columns: dict, text_columns: dict | None = None, n: int | None = None):
    """Relative residual of every relation a record over-determines with given values.

    Returns a list of (equation, row indices, given field values, implied, residual)
    per equation; ``residual = (given − implied)/implied`` of the primary field.
    """
    text_columns = text_columns or {}
    if n is None:
        n = len(next(iter(columns.values()))) if columns else 0
    dc_ok = _dc_basis_mask(text_columns, n)
    out = []
    for eq in EQUATIONS:
        primary = eq.solvers[0]
        needed = (primary.output, *primary.inputs)
        if any(name not in columns for name in needed):
            continue
        have = np.ones(n, dtype=bool) if not eq.dc_constants else dc_ok.copy()
        for name in needed:
            have &= ~np.isnan(np.asarray(columns[name], dtype=float))
        if not have.any():
            continue
        idx = np.flatnonzero(have)
        args = [np.asarray(columns[name], dtype=float)[idx] for name in primary.inputs]
        with np.errstate(all="ignore"):
            implied = np.broadcast_to(np.asarray(primary.func(*args), dtype=float), idx.shape)
        given = np.asarray(columns[primary.output], dtype=float)[idx]
        with np.errstate(all="ignore"):
            res = (given - implied) / np.abs(implied)
        out.append((eq, idx, {name: np.asarray(columns[name], dtype=float)[idx] for name in needed},
                    implied, res))
    return out


def relation_table_markdown() -> str:
    """The relation table as Markdown (documentation is generated from the data)."""
    lines = ["| relation | field | from |", "|---|---|---|"]
    for eq in EQUATIONS:
        for s in eq.solvers:
            lines.append(f"| {eq.name} | {s.output} | {', '.join(s.inputs)} |")
    return "\n".join(lines)
