"""Derivation of missing motor constants, with provenance, and consistency residuals.

The physical relations of the linear DC motor are kept as data: :data:`EQUATIONS`
lists each relation once, with the fields it ties together and a solver for every
field it can be solved for (plain functions of :mod:`catalog.physics`).  The
closure walks the table over whole columns (numpy), filling a missing field
wherever all the inputs of one of its solvers are present, repeatedly until nothing
more follows.  Where a record gives every field of a relation, the relation is
over-determined and its relative residual is computed: a large one is a datasheet
typo or a different definition.  A wrong given value can also hide inside the derived
ones (the closure fills each gap from the first relation that can): after the
closure, every relation whose fields are all known is evaluated again where it
involves a given value the derivation did not use (:func:`hidden_residuals`).
Single values that no datasheet can hold are caught by :mod:`catalog.plausibility`.

Every derived value is recomputed from the given values only, so deriving twice
changes nothing, and a given value is never replaced.

Nothing here reads or writes the catalogue: columns in, columns out.  Storing the
derived values, their history and the residuals is :mod:`catalog.store.derived`.
"""
from __future__ import annotations

__all__ = ["Equation", "Solver", "EQUATIONS", "DERIVABLE", "SOLVERS", "SOLVER_RELATIONS",
           "ASSUMED_REFERENCE_TEMPERATURE", "max_continuous_current_at_rating_ambient", "DeriveResult",
           "derive_columns", "residuals", "hidden_residuals", "Findings", "Flag", "DEFAULT_TOLERANCE",
           "RATING_AMBIENT", "DEFAULT_REFERENCE_TEMPERATURE", "FIELD_BITS", "FRAGILE_SOURCE",
           "source_names", "flag_rank", "relation_table_markdown"]

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
    basis (Kt = Ke in SI, or a speed-torque line drawn from V/Ke), or whose datasheet
    form assumes it (no-load speed = V/Ke with Ke the DC-equivalent peak, maximum power
    and efficiency of the DC model): they are skipped for brushless records stated
    line-to-line, whose Kt and Ke differ by a waveform factor.
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
        _s("nominal_voltage", P.supply_voltage_from_no_load_speed)), dc_constants=True),
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
        _s("stall_current", P.stall_current_from_max_efficiency)), dc_constants=True),
    Equation("maximum output power = (V − R·I0)²/(4R)", (
        _s("max_output_power", P.max_output_power, **_AT_NOMINAL_VOLTAGE),), dc_constants=True),
    Equation("nominal current = (Tn + Kt·I0)/Kt", (
        _s("nominal_current", P.current_at_torque, torque="nominal_torque"),
        _s("nominal_torque", P.torque_at_current, current="nominal_current"),
        _s("no_load_current", P.no_load_current_from_current_and_torque, fragile=True,
           torque="nominal_torque", current="nominal_current"))),
    Equation("nominal speed on the speed-torque line", (
        _s("nominal_speed", P.speed_at_torque, torque="nominal_torque", **_AT_NOMINAL_VOLTAGE),
        _s("nominal_torque", P.torque_at_speed, speed="nominal_speed", **_AT_NOMINAL_VOLTAGE),
        _s("no_load_current", P.no_load_current_from_speed_and_torque, fragile=True,
           torque="nominal_torque", speed="nominal_speed", **_AT_NOMINAL_VOLTAGE)),
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
        _s("stall_torque", P.stall_torque_from_max_output_power)), dc_constants=True),
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


def _numeric_motor_fields() -> list:
    from .fields import fields_for

    return [f.name for f in fields_for("motor").values() if f.is_numeric]


#: The bit of each numeric motor field in :attr:`DeriveResult.sources`.
FIELD_BITS = {name: np.uint64(1) << np.uint64(k) for k, name in enumerate(_numeric_motor_fields())}
#: The source bit of a value a fragile solver is on the way to: it carries the rounding of its
#: inputs amplified (a small difference of large numbers), so no check is made through it.
FRAGILE_SOURCE = np.uint64(1) << np.uint64(63)
assert len(FIELD_BITS) < 63, "more numeric motor fields than source bits"


def source_names(bits: np.ndarray) -> np.ndarray:
    """Object array of "field, field, ..." (schema order) of each source bit mask in ``bits``."""
    bits = np.asarray(bits, dtype=np.uint64)
    distinct, where = np.unique(bits, return_inverse=True)
    texts = [", ".join(name for name, bit in FIELD_BITS.items() if b & bit) for b in distinct]
    return np.asarray(texts, dtype=object)[where.reshape(bits.shape)]
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
    # field -> uint64 ndarray: the given fields (FIELD_BITS) a value follows from, FRAGILE_SOURCE
    # where a fragile solver is on the way
    sources: dict = field(default_factory=dict)
    dc_ok: np.ndarray | None = None  # True where Kt and Ke are on one basis (see Equation)

    def derived_count(self) -> int:
        return int(sum(np.count_nonzero(o != None) for o in self.origin.values()))  # noqa: E711

    def given(self, name: str) -> np.ndarray:
        """True where the record gives ``name`` (known and not derived)."""
        return (self.codes[name] < 0) & ~np.isnan(self.columns[name])


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
    zero = np.uint64(0)
    sources = {name: np.where(np.isnan(col), zero, FIELD_BITS.get(name, zero)).astype(np.uint64)
               for name, col in cols.items()}
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
                    rows = idx[ok]
                    out[rows] = values[ok]
                    origin[solver.output][rows] = solver
                    codes[solver.output][rows] = _SOLVER_CODES[id(solver)]
                    src = FRAGILE_SOURCE if solver.fragile else zero
                    for name in solver.inputs:
                        src = src | sources[name][rows]
                    sources[solver.output][rows] = src
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
    return DeriveResult(cols, origin, equation, codes, sources, dc_ok)


@dataclass(frozen=True)
class Flag:
    """One finding about a record: an over-determined relation whose values disagree (given
    values alone, or through derived ones), or a value no datasheet can hold
    (:mod:`catalog.plausibility`, where ``implied_value`` is the limit)."""

    record_id: str
    relation: str
    field: str
    given: str  # "field=value, ..." of the given values (SI)
    given_value: float
    implied_value: float
    residual: float

    def __str__(self) -> str:
        return self.describe("metric")

    def describe(self, preset: str = "metric") -> str:
        """The flag as one line, values in the display ``preset`` (si, datasheet, imperial)."""
        def show(name, value):
            from .fields import fields_for
            from .present import display_value

            f = fields_for("motor").get(name)
            if f is None or f.dimension is None:
                return f"{value:.5g}"
            v, label = display_value(value, f.dimension, preset, field=f)
            return f"{v:.5g} {label}".strip()

        from .plausibility import check_named

        parts, names = [], set()
        for item in self.given.split(", ") if self.given else []:
            name, _, value = item.partition("=")
            names.add(name)
            try:
                parts.append(f"{name} {show(name, float(value))}")
            except ValueError:
                parts.append(item)
        how = "given" if self.field in names or not names else "derived"
        other = ("the limit is" if check_named(self.relation) is not None else "the other values imply")
        return (f"{self.record_id}: {self.relation}: {self.field} {how} {show(self.field, self.given_value)}, "
                f"{other} {show(self.field, self.implied_value)} ({self.residual:+.1%}); "
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


@dataclass
class Findings:
    """Rows of checks beyond the direct residuals (aligned arrays, one row per record and check)."""

    idx: np.ndarray  # record positions
    relation: np.ndarray  # object: the text of the check, as stored in ``flags.relation``
    field: np.ndarray  # object: the field whose value is compared
    given: np.ndarray  # object: "field, ..." of the given values involved
    value: np.ndarray  # the field's value
    implied: np.ndarray  # what the other values imply (or the limit)
    residual: np.ndarray  # (value − implied)/|implied|

    @classmethod
    def empty(cls) -> "Findings":
        none = np.empty(0, dtype=object)
        return cls(np.empty(0, dtype=np.int64), none, none, none, np.empty(0), np.empty(0), np.empty(0))

    @classmethod
    def concat(cls, parts: list) -> "Findings":
        parts = [p for p in parts if len(p.idx)]
        if not parts:
            return cls.empty()
        return cls(*(np.concatenate([getattr(p, name) for p in parts])
                     for name in ("idx", "relation", "field", "given", "value", "implied", "residual")))

    def order(self) -> "Findings":
        """The rows by record, then by the order of the checks (stable)."""
        keep = np.argsort(self.idx, kind="stable")
        return Findings(*(getattr(self, name)[keep]
                          for name in ("idx", "relation", "field", "given", "value", "implied", "residual")))


#: What a check through derived values adds to the relation's name.
THROUGH = ", through derived "


def hidden_residuals(result: DeriveResult, tolerance: float = DEFAULT_TOLERANCE) -> Findings:
    """Contradictions visible only through derived values, above ``tolerance``.

    The closure fills a missing field from the first relation that can, so a wrong given
    value may be used to derive others, or may stand beside derived values that no
    relation compares it with: e.g. V, R, Kt, I0 and a stall torque 30 % too high give
    the stall current V/R, and ``stall torque = Kt·(Is − I0)`` then holds four known
    values of which the stall torque was never used.  After the closure every relation
    whose fields are all known is therefore evaluated again where

    * at least one of its fields is derived (all given: that is :func:`residuals`), and
    * one of its given fields is not among the given values its derived fields follow
      from (:attr:`DeriveResult.sources`); otherwise the relation holds by construction
      (it, or relations implied by it, made the derived values), and
    * no derived field went through a fragile solver (its rounding error, amplified by
      the condition number, would be flagged instead of a typo).

    The field compared is the first given field the derivation did not use that the
    relation has a well-conditioned solver for (else its primary field); its residual
    is (value − implied)/|implied| as for :func:`residuals`.  The given values named are
    all those the check involves, its own given fields and the sources of its derived
    ones.  Only rows above ``tolerance`` are returned: they are findings, not the
    residual table of over-determined relations.
    """
    cols, parts, masks = result.columns, [], []
    n = len(next(iter(cols.values()))) if cols else 0
    for eq in EQUATIONS:
        names = eq.fields
        known = np.ones(n, dtype=bool) if not eq.dc_constants or result.dc_ok is None else result.dc_ok.copy()
        for name in names:
            known &= ~np.isnan(cols[name])
        if not known.any():
            continue
        idx = np.flatnonzero(known)
        given = {name: result.given(name)[idx] for name in names}
        derived = ~np.logical_and.reduce([given[name] for name in names])
        mine = np.zeros(len(idx), dtype=np.uint64)  # the relation's own given fields
        used = np.zeros(len(idx), dtype=np.uint64)  # the given values its derived fields follow from
        for name in names:
            bit = FIELD_BITS[name]
            mine |= np.where(given[name], bit, np.uint64(0))
            used |= np.where(given[name], np.uint64(0), result.sources[name][idx])
        check = derived & ((mine & ~used) != 0) & ((used & FRAGILE_SOURCE) == 0)
        if not check.any():
            continue
        idx, mine, used = idx[check], mine[check], used[check]
        given = {name: g[check] for name, g in given.items()}
        # the field to compare: the first unused given field with a well-conditioned solver
        chosen = np.full(len(idx), -1)
        for k, solver in enumerate(eq.solvers):
            if solver.fragile:
                continue
            unused = given[solver.output] & ((used & FIELD_BITS[solver.output]) == 0)
            chosen = np.where((chosen < 0) & unused, k, chosen)
        chosen[chosen < 0] = 0
        for k in np.unique(chosen):
            solver, rows = eq.solvers[k], np.flatnonzero(chosen == k)
            at = idx[rows]
            with np.errstate(all="ignore"):
                implied = np.broadcast_to(np.asarray(solver.func(*(cols[name][at] for name in solver.inputs)),
                                                     dtype=float), at.shape)
                value = cols[solver.output][at]
                res = (value - implied) / np.abs(implied)
            flagged = np.abs(res) > tolerance
            if not flagged.any():
                continue
            rows, at = rows[flagged], at[flagged]
            through = np.zeros(len(rows), dtype=np.uint64)
            for name in names:
                through |= np.where(given[name][rows], np.uint64(0), FIELD_BITS[name])
            involved = (mine[rows] | used[rows]) & ~FRAGILE_SOURCE
            masks.append(involved)
            parts.append(Findings(
                at, np.asarray([eq.name + THROUGH + t for t in source_names(through)], dtype=object),
                np.full(len(rows), solver.output, dtype=object), source_names(involved),
                value[flagged], implied[flagged], res[flagged]))
    if not parts:
        return Findings.empty()
    found, masks = Findings.concat(parts), np.concatenate(masks)
    keep = _smallest_contradictions(found.idx, masks, _direct_flag_masks(result, set(found.idx), tolerance))
    return Findings(*(getattr(found, name)[keep]
                      for name in ("idx", "relation", "field", "given", "value", "implied", "residual")))


def _direct_flag_masks(result: DeriveResult, records: set, tolerance: float) -> dict:
    """record position -> source masks of the relations its given values alone contradict."""
    out: dict = {}
    rows = np.fromiter(records, dtype=np.int64)
    if len(rows) == 0:
        return out
    for eq in EQUATIONS:
        primary = eq.solvers[0]
        names = (primary.output, *primary.inputs)
        have = np.logical_and.reduce([result.given(name)[rows] for name in names])
        if eq.dc_constants and result.dc_ok is not None:
            have &= result.dc_ok[rows]
        at = rows[have]
        if len(at) == 0:
            continue
        with np.errstate(all="ignore"):
            implied = np.asarray(primary.func(*(result.columns[name][at] for name in primary.inputs)), dtype=float)
            res = (result.columns[primary.output][at] - implied) / np.abs(implied)
        mask = np.uint64(0)
        for name in names:
            mask |= FIELD_BITS[name]
        for i in at[np.abs(res) > tolerance]:
            out.setdefault(int(i), []).append(mask)
    return out


def _smallest_contradictions(idx: np.ndarray, masks: np.ndarray, direct: dict) -> np.ndarray:
    """Which checks through derived values to report: not one whose given values hold all those
    of a contradiction already reported for the record (a relation of given values alone, or
    another such check with fewer given values, or the same ones found earlier), which it
    repeats.  One wrong value still shows in every smallest set of given values it spoils."""
    keep = np.ones(len(idx), dtype=bool)
    for i in np.unique(idx):
        rows = np.flatnonzero(idx == i)
        known = list(direct.get(int(i), []))
        for k in sorted(rows, key=lambda r: (bin(int(masks[r])).count("1"), r)):
            m = masks[k]
            if any((m & other) == other for other in known):
                keep[k] = False
            else:
                known.append(m)
    return keep


def flag_rank(relation: str) -> int:
    """Where a flag of ``relation`` comes in a report: the relations in table order, then the
    checks through derived values in the same order, then the plausibility checks."""
    from .plausibility import CHECKS, check_named

    name, through, _ = relation.partition(THROUGH)
    ranks = {eq.name: k for k, eq in enumerate(EQUATIONS)}
    if name in ranks:
        return ranks[name] + (len(ranks) if through else 0)
    check = check_named(relation)
    return 2 * len(ranks) + (CHECKS.index(check) if check is not None else len(CHECKS))


def relation_table_markdown() -> str:
    """The relation table as Markdown (documentation is generated from the data)."""
    lines = ["| relation | field | from |", "|---|---|---|"]
    for eq in EQUATIONS:
        for s in eq.solvers:
            lines.append(f"| {eq.name} | {s.output} | {', '.join(s.inputs)} |")
    return "\n".join(lines)
