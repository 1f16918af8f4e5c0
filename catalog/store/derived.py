"""Derived values and consistency residuals in the catalogue file.

:mod:`catalog.derive` is pure (columns in, columns out).  This module is its store
side: it turns the closure's columns into the long rows of ``record_values`` and
``flags`` (:func:`derive_rows`), reads the given values of stored motors back as
columns (:func:`given_motor_columns`), and writes what a derivation changed, with
the values it replaced kept in ``value_history`` (:func:`derive_in_store`).
"""
from __future__ import annotations

__all__ = ["DerivedRows", "StoreOutcome", "derive_rows", "derive_in_store", "given_motor_columns",
           "empty_derived_table"]

from dataclasses import dataclass, field

import numpy as np

from ..derive import (DEFAULT_TOLERANCE, SOLVER_RELATIONS, SOLVERS, Findings, Flag, derive_columns, flag_rank,
                      hidden_residuals, residuals)
from ..plausibility import implausible_values


@dataclass
class StoreOutcome:
    """What :func:`derive_in_store` did: how many values it derived, and the flagged residuals."""

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
    written: :func:`derive_in_store` and the import (:mod:`catalog.ingest.writer`) store
    the rows.
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
    relations, relation_of = _dictionary(list(SOLVER_RELATIONS))
    inputs, inputs_of = _dictionary([", ".join(s.inputs) for s in SOLVERS])
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
    # contradictions through derived values and implausible single values: stored when flagged
    found = Findings.concat([hidden_residuals(result, tolerance), implausible_values(result, tolerance)])
    if len(found.idx):
        positions.append(found.idx)
        tables.append(pa.table({
            "record_id": id_array.take(pa.array(found.idx)), "relation": pa.array(found.relation, type=pa.string()),
            "given": pa.array(found.given, type=pa.string()), "field": pa.array(found.field, type=pa.string()),
            "given_value": _floats(found.value), "implied_value": _floats(found.implied),
            "residual": _floats(found.residual)}))
        for k in range(len(found.idx)):
            i = found.idx[k]
            text = ", ".join(f"{name}={columns[name][i]:.6g}" for name in found.given[k].split(", ") if name)
            out.flagged.append(Flag(str(ids[i]), found.relation[k], found.field[k], text, float(found.value[k]),
                                    float(found.implied[k]), float(found.residual[k])))
    if tables:  # record by record too
        out.flags = pa.concat_tables(tables).take(pa.array(np.argsort(np.concatenate(positions), kind="stable")))
    where = {rid: k for k, rid in enumerate(ids)} if out.flagged else {}
    out.flagged.sort(key=lambda f: (flag_rank(f.relation), where[f.record_id]))
    return out


def given_motor_columns(con, record_ids):
    """Given numeric and text values of motors (all, or ``record_ids``), wide, as numpy columns
    in the order of their ids: ``(ids, {field: float array}, {"constant_basis": object array})``.

    Leaves the temporary table ``derive_ids`` (the motors and their positions) in ``con``
    for the caller, which drops it.
    """
    import pyarrow as pa

    from ..fields import fields_for

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
    ids, columns, texts = given_motor_columns(con, record_ids)
    outcome = StoreOutcome()
    rows = derive_rows(ids, columns, texts, tolerance)
    con.register("new_derived", rows.values if rows.values is not None else empty_derived_table())
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


def empty_derived_table():
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
