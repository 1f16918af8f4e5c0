"""Export the catalogue (all motors or gearheads, or a SQL filter of them).

The filter is the condition of a ``WHERE`` clause on the ``motors`` or
``gearheads`` view (SI units, canonical column names), run on a read-only
connection with file access switched off; values can be passed as named
parameters (``mass < $m`` with ``params={"m": 0.2}``) instead of being
pasted into the text.
"""
from __future__ import annotations

__all__ = ["catalogue_tables", "export_catalogue", "provenance_table", "KINDS", "about_block"]

import datetime as _dt

from ..errors import InputError, Problem
from ..store import is_damage

#: Export kind → (view, record type).
KINDS = {"motors": ("motors", "motor"), "gearheads": ("gearheads", "gearhead")}


def about_block(cat=None, preset: str = "metric", **more) -> dict:
    """Run details written with every export (``about`` sheet / object)."""
    from .. import __version__
    from ..units import preset_name

    out = {"program": f"motorshelf {__version__}",
           "created": _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat(),
           "catalogue": str(cat.path) if cat is not None else "",
           "units": preset_name(preset),
           "values": "display units in the headers; stored in SI"}
    out.update(more)
    return out


def _where_problem(where: str, message: str) -> InputError:
    return InputError(f"--where: {message}", [Problem("--where", None, None, message)])


def _check_where(where: str) -> None:
    import duckdb

    text = where.strip()
    if not text:
        raise _where_problem(where, "empty condition, expected e.g. \"mass < 0.2\"")
    try:
        statements = duckdb.extract_statements(f"SELECT 1 FROM motors WHERE ({text}\n)")
    except duckdb.Error as exc:
        raise _where_problem(where, str(exc).splitlines()[0]) from None
    if len(statements) != 1 or statements[0].type != duckdb.StatementType.SELECT:
        raise _where_problem(where, "expected one condition, found more than one statement")


def _query(cat, view: str, where: str | None, params: dict | None, limits=None):
    """(records frame, values frame) of the view rows matching ``where``, within ``limits``
    (:class:`catalog.store.limits.QueryLimits`, default ones)."""
    import duckdb

    from ..store.limits import QueryLimits, bounded, fetch_arrow

    limits = limits or QueryLimits.of(option="--where")
    cond = ""
    if where:
        _check_where(where)
        cond = f" WHERE ({where.strip()}\n)"
    sql = f"SELECT * FROM {view}{cond} ORDER BY id"
    vsql = ("SELECT record_id, field, value_num, value_text, raw_text, raw_unit, origin, relation, inputs, "
            f"source_file, source_row FROM record_values WHERE record_id IN (SELECT id FROM {view}{cond}) "
            "ORDER BY record_id, field")
    params = dict(params or {})
    with cat.store.read() as con:
        try:
            with bounded(con, limits):  # the condition is the user's SQL: time, memory, no settings
                rows = fetch_arrow(con.sql(sql, params=params) if params else con.sql(sql), limits).to_pandas()
                vals = fetch_arrow(con.sql(vsql, params=params) if params else con.sql(vsql), limits).to_pandas()
        except duckdb.Error as exc:
            if is_damage(exc):  # the file, not the condition
                raise cat.store.damaged(exc) from None
            raise _where_problem(where or "", str(exc).splitlines()[0]) from None
    return rows, vals


def provenance_table(values, record_types: dict, preset: str = "metric", name: str = "provenance"):
    """The provenance sheet: one row per record and field used.

    ``values`` has the columns of ``record_values`` (record_id, field,
    value_num, value_text, raw_text, raw_unit, origin, relation, inputs,
    source_file, source_row); ``record_types`` maps record id → ``motor`` or
    ``gearhead`` (for the field dimensions).  Numbers are shown in ``preset``
    with the unit in the ``unit`` column, and in SI.
    """
    import numpy as np

    from ..fields import fields_for
    from .columns import (NO_CURRENCY, UNITLESS, Column, Table, clean_number, given_digits, si_unit_label,
                          text_column, unit_conversion)

    values = values.reset_index(drop=True)
    n = len(values)
    shown, unit, si_unit = [None] * n, [None] * n, [None] * n
    si_vals = [None] * n
    fields = {t: fields_for(t) for t in ("motor", "gearhead")}
    # each column once as plain objects (iterating an arrow-backed column boxes every cell)
    col = {c: values[c].to_numpy(dtype=object) for c in ("record_id", "field", "value_text", "raw_text", "raw_unit",
                                                          "origin", "relation", "inputs", "source_file",
                                                          "source_row")}
    record_ids = col["record_id"]
    field_names = col["field"]
    rtypes = np.array([record_types.get(r) or "motor" for r in record_ids], dtype=object)
    all_nums = values["value_num"].to_numpy(dtype=float, na_value=np.nan)
    is_currency = field_names == "currency"
    currency_of = dict(zip(record_ids[is_currency], col["value_text"][is_currency]))
    # one conversion per (record type, field): the rows of each group, found without pandas' groupby
    keys = np.array([f"{t}\x00{f}" for t, f in zip(rtypes, field_names)], dtype=object)
    if n:
        uniq, first, group_of = np.unique(keys.astype(str), return_index=True, return_inverse=True)
        order = np.argsort(group_of, kind="stable")
        cuts = np.searchsorted(group_of[order], np.arange(len(uniq) + 1))
    else:
        first, order, cuts = np.zeros(0, dtype=int), np.zeros(0, dtype=int), np.zeros(1, dtype=int)
    for g, at in enumerate(first):
        rt, fname = rtypes[at], field_names[at]
        f = fields[rt].get(fname)
        pos = order[cuts[g]:cuts[g + 1]]
        nums = all_nums[pos]
        if f is None or not f.is_numeric or np.all(np.isnan(nums)):
            continue
        if f.dimension is None:
            disp, label, si_label = nums, UNITLESS, None
        else:
            convert, label = unit_conversion(f.dimension, preset, fname)
            label = label or convert.label_for(nums)
            disp = convert(nums)
            si_label = si_unit_label(f.dimension, fname)
            label = label or UNITLESS
        for k, p in enumerate(pos):
            i = int(p)
            shown[i] = clean_number(disp[k], f.kind == "integer")
            si_vals[i] = clean_number(nums[k])
            unit[i] = label
            if fname == "price":
                unit[i] = currency_of.get(record_ids[i]) or NO_CURRENCY
            si_unit[i] = si_label or unit[i]
    src = [f"{a}:{int(b)}" if isinstance(a, str) and a and b == b and b is not None else (a or None)
           for a, b in zip(col["source_file"], col["source_row"])]
    origin_text = []
    for o, rel, inp, raw, ru, s in zip(col["origin"], col["relation"], col["inputs"], col["raw_text"],
                                       col["raw_unit"], src):
        if o == "derived":
            origin_text.append(f"derived: {rel}" + (f" from {inp}" if isinstance(inp, str) and inp else ""))
        else:
            written = f"{raw!r}" if isinstance(raw, str) else "''"
            if isinstance(ru, str) and ru and (not isinstance(raw, str) or ru not in raw):
                written += f" [{ru}]"
            origin_text.append(f"given: {written}" + (f" ({s})" if s else ""))
    digits = [given_digits(t) if o == "given" else None for t, o in zip(col["raw_text"], col["origin"])]
    cols = [
        text_column("record_id", col["record_id"]),
        text_column("field", col["field"]),
        Column("value", "number", shown, si_vals, "see unit", "see si_unit", digits=digits),
        text_column("unit", unit),
        Column("value_si", "number", si_vals, si_vals, "see si_unit", "see si_unit", digits=list(digits)),
        text_column("si_unit", si_unit),
        text_column("text", col["value_text"]),
        text_column("origin", col["origin"]),
        text_column("relation", col["relation"]),
        text_column("inputs", col["inputs"]),
        text_column("raw_text", col["raw_text"]),
        text_column("raw_unit", col["raw_unit"]),
        text_column("source", src),
        text_column("how", origin_text),
    ]
    return Table(name, cols, freeze_columns=2)


def catalogue_tables(cat, kind: str, where: str | None = None, params: dict | None = None,
                     preset: str = "metric", limits=None):
    """``[records table, provenance table]`` of ``kind`` (``motors`` or ``gearheads``); ``limits``
    bound the query of ``where`` (:class:`catalog.store.limits.QueryLimits`)."""
    from ..fields import fields_for
    from .columns import apply_given_digits, table_from_frame

    if kind not in KINDS:
        raise InputError(f"unknown kind {kind!r}, expected motors or gearheads",
                         [Problem("kind", None, None, f"{kind!r} is not motors or gearheads")])
    view, rtype = KINDS[kind]
    rows, vals = _query(cat, view, where, params, limits)
    order = [c for c in fields_for(rtype) if c in rows.columns]
    main = table_from_frame(rows, kind, preset, record_type=rtype, columns=order, freeze_columns=1)
    apply_given_digits(main, vals)
    prov = provenance_table(vals.reset_index(drop=True), {r: rtype for r in rows["id"]}, preset)
    return [main, prov]


def _export_stock(cat, path, where, units):
    from .stock import export_stock

    if where:
        raise _where_problem(where, "the stock export writes the whole shelf; --where filters motors or gearheads")
    return export_stock(cat, path, units)


def export_catalogue(cat, kind: str, path, where: str | None = None, params: dict | None = None,
                     units: str = "metric", time_limit=None, memory_limit=None):
    """Write the ``motors`` or ``gearheads`` of ``cat`` (optionally filtered) to ``path``.

    Parameters
    ----------
    cat : Catalog
        The catalogue (``catalog.open(path)``).
    kind : str
        ``motors`` or ``gearheads``; ``stock`` writes the shelf and its value
        (:func:`catalog.export.stock.export_stock`).
    path : str or Path
        The file; its extension picks the format (:data:`catalog.export.formats.FORMATS`).
    where : str, optional
        SQL condition on the view (SI units), e.g. ``"mass < $m AND mount = 'F22'"``.
    params : dict, optional
        Named parameters of ``where`` (``{"m": 0.2}``).
    units : str
        Display preset ``si``, ``metric`` (also read as ``datasheet``) or ``imperial`` (a format that
        keeps SI ignores it).
    time_limit, memory_limit : optional
        Bounds of the query [s], [bytes or ``"4GB"``] (see :mod:`catalog.store.limits`).

    Returns
    -------
    (Path, int)
        The file written and the number of records in it.
    """
    from .writers import format_for, units_written, write_tables_to_file

    from ..store.limits import QueryLimits

    format_for(path)   # a wrong extension is an input error before any work
    if kind == "stock":
        return _export_stock(cat, path, where, units)
    limits = QueryLimits.of(time_limit, memory_limit, "--where")  # one statement only: _check_where
    tables = catalogue_tables(cat, kind, where, params, units, limits)
    about = about_block(cat, units_written(path, units), export=kind,
                        where=where or "", parameters=dict(params or {}), records=len(tables[0]))
    return write_tables_to_file(tables, path, about), len(tables[0])
