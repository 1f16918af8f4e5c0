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
"""
from __future__ import annotations

__all__ = ["Equation", "Solver", "EQUATIONS", "DeriveResult", "derive_columns", "residuals",
           "derive_rows", "DerivedRows", "derive_in_store", "DEFAULT_TOLERANCE",
           "relation_table_markdown", "Flag"]

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


def _s(output, func, *inputs, fragile=False):
    return Solver(output, tuple(inputs), func, fragile)


V, R, I0, KT, KE = "nominal_voltage", "terminal_resistance", "no_load_current", "torque_constant", "back_emf_constant"
IS, TS, W0, G = "stall_current", "stall_torque", "no_load_speed", "speed_torque_gradient"
TREF = "resistance_reference_temperature"


def _max_continuous_current(tmax, r, rth1, rth2, tref):
    return P.max_continuous_current(tmax, r, rth1, rth2, RATING_AMBIENT, tref)


EQUATIONS: tuple = (
    Equation("torque constant = back-EMF constant (SI)", (
        _s(KT, P.torque_constant_from_back_emf_constant, KE),
        _s(KE, P.back_emf_constant_from_torque_constant, KT)), dc_constants=True),
    Equation("speed constant = 1/back-EMF constant", (
        _s("speed_constant", P.speed_constant_from_back_emf_constant, KE),
        _s(KE, P.back_emf_constant_from_speed_constant, "speed_constant")), dc_constants=True),
    Equation("torque constant = 1/speed constant (SI)", (
        _s(KT, P.torque_constant_from_speed_constant, "speed_constant"),
        _s("speed_constant", P.speed_constant_from_torque_constant, KT)), dc_constants=True),
    Equation("stall current = V/R", (
        _s(IS, P.stall_current, V, R),
        _s(R, P.resistance_from_stall_current, V, IS),
        _s(V, P.supply_voltage_from_stall_current, IS, R))),
    Equation("stall torque = Kt·(Is − I0)", (
        _s(TS, P.stall_torque, KT, IS, I0),
        _s(KT, P.torque_constant_from_stall, TS, IS, I0),
        _s(IS, P.stall_current_from_stall_torque, TS, KT, I0),
        _s(I0, P.no_load_current_from_stall, TS, KT, IS, fragile=True))),
    Equation("no-load speed = (V − R·I0)/Ke", (
        _s(W0, P.no_load_speed, V, R, I0, KE),
        _s(KE, P.back_emf_constant_from_no_load_speed, W0, V, R, I0),
        _s(I0, P.no_load_current_from_no_load_speed, W0, V, R, KE, fragile=True),
        _s(R, P.resistance_from_no_load_speed, W0, V, I0, KE, fragile=True),
        _s(V, P.supply_voltage_from_no_load_speed, W0, R, I0, KE))),
    Equation("speed-torque gradient = no-load speed/stall torque", (
        _s(G, P.speed_torque_gradient_from_no_load_speed_and_stall_torque, W0, TS),
        _s(TS, P.stall_torque_from_no_load_speed_and_gradient, W0, G),
        _s(W0, P.no_load_speed_from_stall_torque_and_gradient, TS, G)), dc_constants=True),
    Equation("speed-torque gradient = R/(Kt·Ke)", (
        _s(G, P.speed_torque_gradient, R, KT, KE),
        _s(R, P.resistance_from_speed_torque_gradient, G, KT, KE)), dc_constants=True),
    Equation("friction torque = Kt·I0", (
        _s("friction_torque", P.friction_torque, KT, I0),
        _s(I0, P.no_load_current_from_friction_torque, "friction_torque", KT),
        _s(KT, P.torque_constant_from_friction_torque, "friction_torque", I0))),
    Equation("mechanical time constant = J·gradient", (
        _s("mechanical_time_constant", P.mechanical_time_constant_from_gradient, "rotor_inertia", G),
        _s("rotor_inertia", P.rotor_inertia_from_gradient, "mechanical_time_constant", G))),
    Equation("electrical time constant = L/R", (
        _s("electrical_time_constant", P.electrical_time_constant, "terminal_inductance", R),
        _s("terminal_inductance", P.inductance_from_electrical_time_constant, "electrical_time_constant", R),
        _s(R, P.resistance_from_electrical_time_constant, "electrical_time_constant", "terminal_inductance"))),
    Equation("motor constant = Kt/√R", (
        _s("motor_constant", P.motor_constant, KT, R),
        _s(R, P.resistance_from_motor_constant, "motor_constant", KT),
        _s(KT, P.torque_constant_from_motor_constant, "motor_constant", R))),
    Equation("maximum efficiency = (1 − √(I0/Is))²", (
        _s("max_efficiency", P.max_efficiency, I0, IS),
        _s(I0, P.no_load_current_from_max_efficiency, "max_efficiency", IS),
        _s(IS, P.stall_current_from_max_efficiency, "max_efficiency", I0))),
    Equation("maximum output power = (V − R·I0)²/(4R)", (
        _s("max_output_power", P.max_output_power, V, R, I0),)),
    Equation("nominal current = (Tn + Kt·I0)/Kt", (
        _s("nominal_current", P.current_at_torque, "nominal_torque", KT, I0),
        _s("nominal_torque", P.torque_at_current, "nominal_current", KT, I0))),
    Equation("nominal speed on the speed-torque line", (
        _s("nominal_speed", P.speed_at_torque, "nominal_torque", V, R, KT, KE, I0),
        _s("nominal_torque", P.torque_at_speed, "nominal_speed", V, R, KT, KE, I0)), dc_constants=True),
    Equation("maximum continuous current, thermal model at 25 °C ambient", (
        _s("max_continuous_current", _max_continuous_current, "max_winding_temperature", R,
           "thermal_resistance_winding_housing", "thermal_resistance_housing_ambient", TREF),)),
    Equation("maximum continuous torque = Kt·(Icont − I0)", (
        _s("max_continuous_torque", P.torque_at_current, "max_continuous_current", KT, I0),)),
)

#: Fields every solver may produce must be numeric motor fields; checked in the tests.
DERIVABLE = tuple(sorted({s.output for e in EQUATIONS for s in e.solvers}))


_DEFAULT_SOLVER = Solver(TREF, (), None)
_SOLVER_NAMES = {s: e.name for e in EQUATIONS for s in e.solvers}
_SOLVER_NAMES[_DEFAULT_SOLVER] = "assumed datasheet reference temperature 25 °C"
#: Every solver, numbered: the codes of :attr:`DeriveResult.codes`.
_SOLVERS = (*(s for e in EQUATIONS for s in e.solvers), _DEFAULT_SOLVER)
_SOLVER_CODES = {id(s): k for k, s in enumerate(_SOLVERS)}


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
    codes: dict = field(default_factory=dict)  # field -> int16 ndarray: -1 or the index in _SOLVERS

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
    tref_given = ~np.isnan(cols[TREF])

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
                    if name != TREF:
                        need &= ~np.isnan(cols[name])
                if not need.any():
                    continue
                idx = np.flatnonzero(need)
                args = [cols[name][idx] if name != TREF else
                        np.where(np.isnan(cols[TREF][idx]), DEFAULT_REFERENCE_TEMPERATURE, cols[TREF][idx])
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
    tref_missing = ~tref_given & ~np.isnan(cols[R])
    cols[TREF] = np.where(tref_missing, DEFAULT_REFERENCE_TEMPERATURE, cols[TREF])
    origin[TREF][tref_missing] = _DEFAULT_SOLVER
    codes[TREF][tref_missing] = _SOLVER_CODES[id(_DEFAULT_SOLVER)]
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


@dataclass
class StoreOutcome:
    derived: int = 0
    flags: list = field(default_factory=list)


@dataclass
class DerivedRows:
    """What :func:`derive_rows` makes of the given values of some motors.

    ``values``: pyarrow table of the derived values (record_id, field, value_num,
    relation, inputs), or None; ``flags``: pyarrow table of the residual of every
    over-determined relation (the columns of the ``flags`` table but ``batch_id``),
    or None; ``flagged``: the :class:`Flag` of each residual above the tolerance.
    """

    values: object = None
    flags: object = None
    flagged: list = field(default_factory=list)

    @property
    def derived(self) -> int:
        return 0 if self.values is None else self.values.num_rows


def _floats(values):
    """A pyarrow float column, null where NaN (as the store has always held a missing number)."""
    import pyarrow as pa

    values = np.asarray(values, dtype=float)
    return pa.array(values, type=pa.float64(), mask=np.isnan(values))


def _dictionary(texts: list):
    """(pyarrow array of the distinct ``texts``, int32 array: position of each text in it)."""
    import pyarrow as pa

    distinct = list(dict.fromkeys(texts))
    where = {t: k for k, t in enumerate(distinct)}
    return pa.array(distinct, type=pa.string()), np.array([where[t] for t in texts], dtype=np.int32)


def derive_rows(ids, columns: dict, text_columns: dict | None = None,
                tolerance: float = DEFAULT_TOLERANCE) -> DerivedRows:
    """Derived values and residuals of the motors ``ids`` from their given ``columns``, as rows.

    ``columns`` maps every numeric motor field to the given SI values (NaN = missing),
    ``text_columns`` holds ``constant_basis``; rows follow ``ids``.  Nothing is read or
    written: :func:`derive_in_store` and the import store the rows.
    """
    import pyarrow as pa

    ids = np.asarray(ids, dtype=object)
    n = len(ids)
    out = DerivedRows()
    if n == 0:
        return out
    id_array = pa.array(ids, type=pa.string())
    result = derive_columns(columns, text_columns, n)
    # the texts repeated on many rows are dictionary-encoded: each is held (and handed to DuckDB) once
    relations, relation_of = _dictionary([_SOLVER_NAMES[s] for s in _SOLVERS])
    inputs, inputs_of = _dictionary([", ".join(s.inputs) for s in _SOLVERS])
    fields = pa.array(list(result.codes), type=pa.string())
    parts = []  # per field: (record positions, field code, values, solver codes)
    for k, (name, codes) in enumerate(result.codes.items()):
        idx = np.flatnonzero(codes >= 0)
        if len(idx) == 0:
            continue
        if name in columns and not np.isnan(columns[name][idx]).all():
            # the store holds one value per record and field (no key index checks it there)
            raise AssertionError(f"derived {name} over a given value")
        parts.append((idx, np.full(len(idx), k, dtype=np.int32), result.columns[name][idx], codes[idx]))
    if parts:
        # record by record (fields in their order within a record): DuckDB stores rows of one
        # record side by side about twice as fast as rows interleaved field by field
        record, field_code, value, solver = (np.concatenate(c) for c in zip(*parts))
        order = np.argsort(record, kind="stable")
        record, field_code, value, solver = record[order], field_code[order], value[order], solver[order]
        out.values = pa.table({
            "record_id": pa.DictionaryArray.from_arrays(pa.array(record.astype(np.int32)), id_array),
            "field": pa.DictionaryArray.from_arrays(pa.array(field_code), fields),
            "value_num": pa.array(value, type=pa.float64()),
            "relation": pa.DictionaryArray.from_arrays(pa.array(relation_of[solver]), relations),
            "inputs": pa.DictionaryArray.from_arrays(pa.array(inputs_of[solver]), inputs),
        })
    tables, positions = [], []
    for eq, idx, given, implied, res in residuals(columns, text_columns, n):
        primary = eq.solvers[0].output
        m = len(idx)
        positions.append(idx)
        tables.append(pa.table({
            "record_id": id_array.take(pa.array(idx)), "relation": pa.array([eq.name] * m, type=pa.string()),
            "given": pa.array([", ".join(given)] * m, type=pa.string()),
            "field": pa.array([primary] * m, type=pa.string()), "given_value": _floats(given[primary]),
            "implied_value": _floats(implied), "residual": _floats(res)}))
        for k in np.flatnonzero(np.abs(res) > tolerance):  # the few flagged ones, with their numbers
            text = ", ".join(f"{name}={given[name][k]:.6g}" for name in given)
            out.flagged.append(Flag(str(ids[idx[k]]), eq.name, primary, text, float(given[primary][k]),
                                    float(implied[k]), float(res[k])))
    if tables:  # record by record too
        out.flags = pa.concat_tables(tables).take(pa.array(np.argsort(np.concatenate(positions), kind="stable")))
    return out


def _load_given(con, record_ids):
    """Given numeric and text values of motors (all, or ``record_ids``), wide, as numpy columns
    in the order of their ids.  Leaves the registered relation ``derive_ids`` (the motors)."""
    import pyarrow as pa

    from .fields import fields_for

    numeric = [f.name for f in fields_for("motor").values() if f.is_numeric]
    if record_ids is None:
        con.execute("CREATE OR REPLACE TEMP TABLE derive_ids AS SELECT record_id, "
                    "CAST(row_number() OVER (ORDER BY record_id) - 1 AS INTEGER) AS ix "
                    "FROM records WHERE record_type = 'motor'")
    else:
        con.register("asked_ids", _ids_table(record_ids))
        con.execute("CREATE OR REPLACE TEMP TABLE derive_ids AS SELECT record_id, "
                    "CAST(row_number() OVER (ORDER BY record_id) - 1 AS INTEGER) AS ix "
                    "FROM records WHERE record_type = 'motor' AND record_id IN (SELECT record_id FROM asked_ids)")
        con.unregister("asked_ids")
    ids = np.asarray(con.sql("SELECT record_id FROM derive_ids ORDER BY ix").to_arrow_table()
                     .column("record_id").to_pylist(), dtype=object)
    # long rows to a wide array by position: field k, motor ix (one given value per field)
    con.register("derive_fields", pa.table({"field": pa.array(numeric, type=pa.string()),
                                            "k": pa.array(np.arange(len(numeric), dtype=np.int32))}))
    long = con.sql("SELECT m.ix, f.k, v.value_num FROM record_values v JOIN derive_ids m USING (record_id) "
                   "JOIN derive_fields f USING (field) WHERE v.origin = 'given' AND v.value_num IS NOT NULL"
                   ).to_arrow_table()
    con.unregister("derive_fields")
    wide = np.full((len(numeric), len(ids)), np.nan)
    wide[long.column("k").to_numpy(), long.column("ix").to_numpy()] = long.column("value_num").to_numpy()
    columns = dict(zip(numeric, wide))
    basis = con.sql("SELECT m.ix, v.value_text FROM record_values v JOIN derive_ids m USING (record_id) "
                    "WHERE v.origin = 'given' AND v.field = 'constant_basis'").to_arrow_table()
    texts = {"constant_basis": np.full(len(ids), None, dtype=object)}
    texts["constant_basis"][basis.column("ix").to_numpy()] = basis.column("value_text").to_pylist()
    return ids, columns, texts


def _ids_table(record_ids):
    import pyarrow as pa

    return pa.table({"record_id": pa.array(list(record_ids), type=pa.string())})


def derive_in_store(con, batch_id: int, record_ids=None, tolerance: float = DEFAULT_TOLERANCE) -> StoreOutcome:
    """Recompute the derived values and residuals of motors (all, or ``record_ids``).

    Runs inside the caller's transaction ``con``.  Only what changed is written: a
    derived value derived again identically keeps the batch that computed it (so
    deriving twice changes nothing); one that changes or disappears is kept in
    ``value_history`` (replaced by ``batch_id``), so ``motorshelf history`` shows it;
    a new one is stored as of ``batch_id``.  Residuals likewise.  Given values are
    never touched.
    """
    ids, columns, texts = _load_given(con, record_ids)
    outcome = StoreOutcome()
    rows = derive_rows(ids, columns, texts, tolerance)
    con.register("new_derived", rows.values if rows.values is not None else _no_derived())
    con.register("new_flags", rows.flags if rows.flags is not None else _no_flags())
    # the records whose derived rows are replaced (a constant condition, never text from a file)
    scope = "true" if record_ids is None else "record_id IN (SELECT record_id FROM derive_ids)"
    held_values = con.execute("SELECT count(*) FROM record_values WHERE origin = 'derived' AND " + scope).fetchone()[0]
    held_flags = con.execute("SELECT count(*) FROM flags WHERE " + scope).fetchone()[0]
    if held_values:
        _replace_derived(con, batch_id, scope)
    else:  # nothing held: no comparison to make
        con.execute("INSERT INTO record_values SELECT record_id, field, value_num, NULL, NULL, NULL, 'derived', "
                    "relation, inputs, NULL, NULL, ? FROM new_derived", [batch_id])
    if held_flags:
        _replace_flags(con, batch_id, scope)
    else:
        con.execute("INSERT INTO flags SELECT record_id, relation, given, field, given_value, implied_value, "
                    "residual, ? FROM new_flags", [batch_id])
    con.unregister("new_derived")
    con.unregister("new_flags")
    con.execute("DROP TABLE derive_ids")
    outcome.derived = rows.derived
    outcome.flags.extend(rows.flagged)
    return outcome


def _replace_derived(con, batch_id: int, scope: str) -> None:
    """Store ``new_derived`` over the derived values of the records in ``scope``, writing only
    what changed."""
    # of the derived values held by the motors in scope, those not derived again identically
    con.execute(
        "CREATE OR REPLACE TEMP TABLE replaced_derived AS SELECT v.* FROM record_values v "
        "WHERE v.origin = 'derived' AND " + scope + " AND NOT EXISTS (SELECT 1 FROM new_derived n "
        "WHERE n.record_id = v.record_id AND n.field = v.field "
        "AND n.value_num IS NOT DISTINCT FROM v.value_num AND n.relation IS NOT DISTINCT FROM v.relation "
        "AND n.inputs IS NOT DISTINCT FROM v.inputs)")
    if con.execute("SELECT count(*) FROM replaced_derived").fetchone()[0]:
        con.execute("INSERT INTO value_history SELECT *, ?, now() FROM replaced_derived", [batch_id])
        con.execute("DELETE FROM record_values WHERE origin = 'derived' "
                    "AND (record_id, field) IN (SELECT record_id, field FROM replaced_derived)")
    con.execute("DROP TABLE replaced_derived")
    # what remains in scope is identical to what was derived now: insert the rest
    con.execute("INSERT INTO record_values SELECT n.record_id, n.field, n.value_num, NULL, NULL, NULL, 'derived', "
                "n.relation, n.inputs, NULL, NULL, ? FROM new_derived n WHERE NOT EXISTS (SELECT 1 FROM "
                "record_values v WHERE v.origin = 'derived' AND v.record_id = n.record_id AND v.field = n.field)",
                [batch_id])


def _replace_flags(con, batch_id: int, scope: str) -> None:
    """Store ``new_flags`` over the residuals of the records in ``scope``, writing only what changed."""
    con.execute(
        "DELETE FROM flags WHERE " + scope + " AND NOT EXISTS (SELECT 1 FROM new_flags n "
        "WHERE n.record_id = flags.record_id "
        "AND n.relation = flags.relation AND n.given IS NOT DISTINCT FROM flags.given "
        "AND n.field IS NOT DISTINCT FROM flags.field AND n.given_value IS NOT DISTINCT FROM flags.given_value "
        "AND n.implied_value IS NOT DISTINCT FROM flags.implied_value "
        "AND n.residual IS NOT DISTINCT FROM flags.residual)")
    con.execute("INSERT INTO flags SELECT n.record_id, n.relation, n.given, n.field, n.given_value, n.implied_value, "
                "n.residual, ? FROM new_flags n WHERE NOT EXISTS (SELECT 1 FROM flags f "
                "WHERE f.record_id = n.record_id AND f.relation = n.relation)", [batch_id])


def _no_derived():
    """An empty table shaped as :attr:`DerivedRows.values`."""
    import pyarrow as pa

    return pa.table({name: pa.array([], type=kind) for name, kind in (
        ("record_id", pa.string()), ("field", pa.string()), ("value_num", pa.float64()),
        ("relation", pa.string()), ("inputs", pa.string()))})


def _no_flags():
    """An empty table shaped as :attr:`DerivedRows.flags`."""
    import pyarrow as pa

    return pa.table({name: pa.array([], type=kind) for name, kind in (
        ("record_id", pa.string()), ("relation", pa.string()), ("given", pa.string()), ("field", pa.string()),
        ("given_value", pa.float64()), ("implied_value", pa.float64()), ("residual", pa.float64()))})
