"""Export a selection: shortlist, rejected candidates, envelope, provenance, cautions.

:func:`write_selection` writes one file whose format follows the extension.
The XLSX holds every sheet (``shortlist``, ``rejected``, ``rejection counts``,
``closest misses`` (asked for, or when nothing passes), ``envelope``, ``provenance``, ``cautions``, ``about``); JSON holds the same
tables (the shortlist at the top level); CSV and Parquet hold the shortlist
only (what each format holds: :data:`catalog.export.formats.FORMATS`).
"""
from __future__ import annotations

__all__ = ["CAUTION", "selection_tables", "write_selection", "selection_document", "envelope_table",
           "caution_lines", "envelope_leaves", "key_text"]

#: The caution every selection export and report carries.
CAUTION = ("Catalogue-based selection is a first pass: verify with a prototype under the real load and "
           "temperature. Winding overheating damages insulation and can demagnetise magnets; peak currents "
           "beyond the rating can demagnetise permanently; supplies above extra-low voltage are dangerous; "
           "moving machinery needs guarding. Local codes and a qualified engineer have the last word.")


def envelope_leaves(node, sch, path):
    """(key path, value as given, schema node) of every leaf of an envelope.

    ``node`` is the envelope as parsed from its TOML file (or a part of it),
    ``sch`` the matching node of the envelope schema, ``path`` the key path of
    ``node`` (``[]`` at the top); lists of tables are walked item by item.
    """
    if isinstance(node, dict):
        props = sch.get("properties", {})
        for k, v in node.items():
            yield from envelope_leaves(v, props.get(k, {}), path + [k])
    elif isinstance(node, list) and any(isinstance(v, dict) for v in node):
        items = sch.get("items", {})
        for i, v in enumerate(node):
            yield from envelope_leaves(v, items, path + [i])
    else:
        yield path, node, sch


def key_text(path) -> str:
    """A key path as written in messages and sheets: ``["cycle", "segments", 2, "torque"]`` →
    ``cycle.segments[2].torque``."""
    out = ""
    for p in path:
        out += f"[{p}]" if isinstance(p, int) else (f".{p}" if out else str(p))
    return out


def envelope_table(envelope, preset: str = "metric"):
    """The envelope as given: one row per input with its value in display units and in SI."""
    from ..select.envelope import envelope_schema
    from ..units import UnitError, get_dimension, parse_quantity
    from .columns import UNITLESS, Column, Table, clean_number, text_column, unit_conversion

    keys, given, shown, unit, si, si_unit, desc = [], [], [], [], [], [], []
    for path, value, sch in envelope_leaves(envelope.raw, envelope_schema(envelope.raw), []):
        keys.append(key_text(path))
        if isinstance(value, list):
            given.append(", ".join(map(str, value)))
        elif isinstance(value, bool):
            given.append("true" if value else "false")
        else:
            given.append(str(value))
        desc.append(sch.get("description", ""))
        dim = sch.get("x-dimension")
        v_si = None
        if dim is not None and not isinstance(value, bool):
            try:
                v_si = float(value) if isinstance(value, (int, float)) else parse_quantity(value, dim)
            except (UnitError, ValueError):
                v_si = None
        if v_si is None:
            if isinstance(value, (int, float)) and not isinstance(value, bool):
                shown.append(clean_number(value)); si.append(clean_number(value))
                unit.append(UNITLESS); si_unit.append(UNITLESS)
            else:
                shown.append(None); si.append(None); unit.append(None); si_unit.append(None)
            continue
        convert, label = unit_conversion(dim, preset)
        label = label or convert.label_for([v_si]) or UNITLESS
        shown.append(clean_number(float(convert([v_si])[0])))
        si.append(clean_number(v_si))
        unit.append(label)
        si_unit.append(get_dimension(dim).display["si"][0] or UNITLESS)
    cols = [text_column("key", keys), text_column("as given", given),
            Column("value", "number", shown, si, "see unit", "see si_unit"), text_column("unit", unit),
            Column("value_si", "number", si, si, "see si_unit", "see si_unit"), text_column("si_unit", si_unit),
            text_column("meaning", desc)]
    return Table("envelope", cols, freeze_columns=1)


def caution_lines(selection, catalog=None) -> list[tuple[str, str]]:
    """(topic, text) rows: the caution, the model's assumptions, notes and consistency flags."""
    env = selection.envelope
    rows = [("caution", CAUTION)]
    tol = env.tolerance
    if any(v != (0.0, 0.0) for v in tol.values()):
        from ..select.registry import checks, corner_label

        for check in checks():
            if check.corners and check.applies(env):
                ends = " or ".join(dict.fromkeys(corner_label(env, c) for c in check.corners))
                rows.append(("tolerance corner", f"{check.key}: judged at {ends} (envelope tolerance"
                                                 + (", the worse per candidate)" if " or " in ends else ")")))
    if env.housing_cooling_factor != 1.0:
        rows.append(("cooling", f"housing-to-ambient thermal resistance × {env.housing_cooling_factor:.3g} "
                                "(envelope housing_cooling_factor); the housing's heat capacity is the "
                                "datasheet's"))
    rows.append(("thermal model", "winding temperature from the two-node thermal network at the envelope's "
                                  "ambient: copper loss with resistance and magnet following the winding "
                                  "temperature at every instant, friction and iron loss (Kt·I0·ω) at the "
                                  "winding of a brushed motor, the housing of a brushless one (the brushes' "
                                  "own loss is not included, their voltage drop is); "
                                  "the hot voltage and the currents are taken at the peak winding "
                                  "temperature (at most the winding's limit)"))
    rows.append(("values", "catalogue values as given or derived (see the provenance sheet); typical values, "
                           "not guaranteed minimums"))
    notes = sorted({n for text in selection.shortlist.get("notes", []) if isinstance(text, str)
                    for n in text.split("; ") if n})
    rows += [("note", n) for n in notes]
    if catalog is not None and len(selection.shortlist):
        used = set(selection.shortlist["motor"]) | set(selection.shortlist["gear"])
        for flag in catalog.check():
            if flag.record_id in used:
                rows.append(("consistency flag", str(flag)))
    elif catalog is None:
        rows.append(("provenance", "not included: the export was made without the catalogue"))
    return rows


def selection_tables(selection, preset: str = "metric", catalog=None) -> list:
    """The tables of a selection export, the shortlist first."""
    import pandas as pd

    from .catalogue import provenance_table
    from .columns import Table, quantity_column, selection_dimensions, table_from_frame, text_column
    from .detail import catalog_or_none

    cat = catalog_or_none(selection, catalog)
    short = selection.shortlist
    dims = selection_dimensions()
    tables = [table_from_frame(short, "shortlist", preset, dimensions=dims, freeze_columns=2)]
    tables.append(table_from_frame(selection.rejected_columns(), "rejected", preset, dimensions=dims,
                                   freeze_columns=1))
    counts = selection.reason_counts()
    from ..select import CHECKS

    tables.append(Table("rejection counts", [
        text_column("check", list(counts.index)),
        text_column("meaning", [CHECKS.get(k, "") for k in counts.index]),
        quantity_column("candidates", [int(v) for v in counts.values], "count", preset, integer=True)]))
    if getattr(selection, "shows_misses", False):
        from ..select.misses import MISS_DIMENSIONS

        tables.append(table_from_frame(selection.misses(), "closest misses", preset,
                                       dimensions={**dims, **MISS_DIMENSIONS}, freeze_columns=2))
    tables.append(envelope_table(selection.envelope, preset))
    if cat is not None and len(short):
        vals, rtypes = cat.provenance(set(short["motor"]) | {g for g in short["gear"] if isinstance(g, str)})
    else:
        from ..api import PROVENANCE_COLUMNS

        vals, rtypes = pd.DataFrame(columns=list(PROVENANCE_COLUMNS)), {}
    tables.append(provenance_table(vals, rtypes, preset))
    rows = caution_lines(selection, cat)
    tables.append(Table("cautions", [text_column("topic", [r[0] for r in rows]),
                                     text_column("text", [r[1] for r in rows])]))
    return tables


def _about(selection, cat, preset) -> dict:
    from .catalogue import about_block

    env = selection.envelope
    n_pass, n_rej = selection.counts
    return about_block(cat, preset, envelope=env.name, envelope_source=str(env.source),
                       candidates=n_pass + n_rej, passing=n_pass, shortlisted=len(selection.shortlist),
                       rejected=n_rej, ranking=", ".join(env.rank_keys), caution=CAUTION)


def write_selection(selection, path, units: str = "metric", catalog=None):
    """Write a selection to ``path``, the format by its extension (:data:`catalog.export.formats.FORMATS`).

    Parameters
    ----------
    selection : Selection
        The result of ``catalog.open(db).select(envelope)``.
    path : str or Path
        Output file; the format follows the extension.
    units : str
        Display preset ``si``, ``metric`` (or its older name ``datasheet``) or ``imperial`` (a format that
        keeps SI ignores it).
    catalog : Catalog, optional
        The catalogue the selection came from, for the provenance sheet
        (default ``selection.catalog`` when the selection carries it).

    Returns
    -------
    Path
    """
    from .detail import catalog_or_none
    from .writers import format_for, units_written, write_tables_to_file

    fmt = format_for(path)
    cat = catalog_or_none(selection, catalog)
    tables = selection_tables(selection, units, cat)
    return write_tables_to_file(tables, path, _about(selection, cat, units_written(path, units)), fmt)


def selection_document(selection, units: str = "metric", catalog=None) -> dict:
    """The document :func:`write_selection` writes to a ``.json`` file, as a dict (same tables,
    same ``about``); the JSON API answers it."""
    from .detail import catalog_or_none
    from .writers import json_document

    cat = catalog_or_none(selection, catalog)
    return json_document(selection_tables(selection, units, cat), _about(selection, cat, units))
