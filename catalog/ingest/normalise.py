"""Normalising raw tables: headers -> canonical fields, cells -> SI values.

Headers are canonical field names, optionally with a unit in square brackets
(``stall_torque [oz-in]``), or a supplier's own headers through a mapping profile.
Quantity cells are converted a whole column at a time through the unit spelling
layer (one cached factor per distinct spelling); the raw text and unit of every
value are kept beside the SI value.
"""
from __future__ import annotations

__all__ = ["NormalTable", "Column", "normalise", "slug"]

import datetime as _dt
import difflib
import math
import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import Problem
from ..fields import RECORD_TYPES, fields_for
from ..units.values import WHITESPACE, WHITESPACE_RE2
from .mapping import MappingProfile
from .readers import RawTable

_HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*(?:\[\s*(.*?)\s*\])?\s*$")
_IDENTITY = ("id", "manufacturer", "part_number")


@dataclass
class Column:
    """One canonical field of a normalised table."""

    values: object  # float ndarray (SI, NaN = missing) or list of str/None
    raw_text: list  # text as written, None where missing
    raw_unit: list  # unit as written or stated by the header/mapping, None if none
    raw_text_array: object = None  # raw_text as a pyarrow string array, where normalising made one


@dataclass
class NormalTable:
    source: str
    record_type: str
    row_numbers: list
    columns: dict = field(default_factory=dict)  # field -> Column
    problems: list = field(default_factory=list)  # Problem, with row numbers of the source
    warnings: list = field(default_factory=list)  # Problem-shaped warnings
    converted: int = 0  # quantity values read from a non-SI unit
    raw: RawTable | None = None

    @property
    def n(self) -> int:
        return len(self.row_numbers)


def slug(*parts: str) -> str:
    """A lower-case identifier from text: ``slug('Quill Motion', 'QM-22/8')`` -> ``quill-motion-qm-22-8``."""
    text = "-".join(p for p in parts if p)
    text = re.sub(r"[^a-z0-9._]+", "-", text.lower()).strip("-._")
    return text or "record"


def _cell_text(value):
    """A raw cell as text; ``{value, unit}`` mappings become 'value unit'."""
    if value.__class__ is str:  # the common case first
        return value if value.strip() else None
    if value is None:
        return None
    if isinstance(value, bool):
        return str(value).lower()
    if isinstance(value, dict):
        if set(value) <= {"value", "unit"} and "value" in value:
            unit = value.get("unit")
            inner = _cell_text(value["value"])
            if inner is None:
                return None
            return f"{inner} {unit}" if unit not in (None, "") else inner
        return "{" + ", ".join(f"{k}: {v}" for k, v in value.items()) + "}"
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        return repr(value)
    if isinstance(value, (_dt.datetime, _dt.date)):
        return value.date().isoformat() if isinstance(value, _dt.datetime) else value.isoformat()
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(str(v) for v in value) + "]"
    text = str(value)
    return text if text.strip() else None


def _text_value(value):
    if value is None:
        return None
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    if isinstance(value, (_dt.datetime, _dt.date)):
        return _cell_text(value)
    text = str(value).strip()
    return text or None


def _infer_type(fields_seen: set[str]) -> str | None:
    fits = [t for t in RECORD_TYPES if fields_seen <= set(fields_for(t))]
    if len(fits) == 1:
        return fits[0]
    if len(fits) > 1:
        return None
    # neither fits: pick the type that knows most of the columns (others are reported unknown)
    best = max(RECORD_TYPES, key=lambda t: len(fields_seen & set(fields_for(t))))
    return best


def _resolve_headers(raw: RawTable, mapping: MappingProfile | None):
    """Map header positions to (field, unit) and decide the record type."""
    problems: list[Problem] = []
    warnings: list[Problem] = []
    hrow = raw.header_row
    positions: dict[int, tuple[str, str | None]] = {}
    seen_headers: dict[str, int] = {}
    repeated: set[int] = set()  # positions of a header seen before: reported once, then skipped
    for pos, header in enumerate(raw.headers):
        if header in seen_headers and header != "":
            problems.append(Problem(raw.source, hrow, header,
                                    f"column {header!r} appears twice (columns {seen_headers[header] + 1} and {pos + 1}), expected once"))
            repeated.add(pos)
            continue
        seen_headers[header] = pos
    rtype = mapping.record_type if mapping else raw.record_type
    if mapping:
        for pos, header in enumerate(raw.headers):
            if pos in repeated:
                continue
            if header in mapping.columns:
                positions[pos] = mapping.columns[header]
            elif header in mapping.ignore or header == "":
                continue
            else:
                close = difflib.get_close_matches(header, list(mapping.columns), n=2)
                hint = f" (did you mean {', '.join(repr(c) for c in close)}?)" if close else ""
                problems.append(Problem(raw.source, hrow, header,
                                        f"column {header!r} is not in mapping profile {mapping.name!r}{hint}; "
                                        "map it or list it under 'ignore'"))
        missing = [h for h in mapping.columns if h not in raw.headers]
        for h in missing:
            warnings.append(Problem(raw.source, hrow, h, f"mapped column {h!r} is not in the file"))
        return rtype, positions, problems, warnings
    parsed = {}
    for pos, header in enumerate(raw.headers):
        if header == "" or pos in repeated:
            continue
        m = _HEADER.match(header)
        if not m:
            problems.append(Problem(raw.source, hrow, header,
                                    f"cannot read column header {header!r}, expected a field name, "
                                    "optionally with a unit in brackets such as 'stall_torque [mNm]'"))
            continue
        parsed[pos] = (m.group(1), m.group(2) or raw.units.get(m.group(1)))
    if rtype is None:
        rtype = _infer_type({f for f, _ in parsed.values()})
        if rtype is None:
            problems.append(Problem(raw.source, hrow, None,
                                    "cannot tell whether the rows are motors or gearheads; add a gearhead "
                                    "column such as ratio, or use a sheet or top-level key named motors/gearheads"))
            return None, {}, problems, warnings
    known = fields_for(rtype)
    fields_used: dict[str, int] = {}
    for pos, (fname, unit) in parsed.items():
        if fname not in known:
            close = difflib.get_close_matches(fname, list(known), n=3)
            hint = f" (did you mean {', '.join(close)}?)" if close else ""
            problems.append(Problem(raw.source, hrow, fname, f"unknown column {fname!r}, expected a {rtype} field{hint}"))
            continue
        if fname in fields_used:
            problems.append(Problem(raw.source, hrow, fname,
                                    f"field {fname!r} given by two columns ({fields_used[fname] + 1} and {pos + 1}), expected one"))
            continue
        if unit and not known[fname].is_quantity:
            problems.append(Problem(raw.source, hrow, fname, f"unit [{unit}] given for {fname!r}, which takes no unit"))
            continue
        fields_used[fname] = pos
        positions[pos] = (fname, unit)
    return rtype, positions, problems, warnings


def _cells_by_position(raw: RawTable, positions) -> dict:
    """position -> the cells of that column (None where a row is shorter): a pyarrow
    string array where the reader read the table column by column, else a sequence."""
    if not positions:
        return {}
    if raw.columns is not None:
        return {pos: raw.columns[pos] for pos in positions}
    rows = raw.rows
    if rows and min(map(len, rows)) > max(positions):
        columns = list(zip(*rows))  # every row reaches every position: transpose at once
        return {pos: columns[pos] for pos in positions}
    return {pos: [row[pos] if pos < len(row) else None for row in rows] for pos in positions}


def _cell_texts(cells) -> tuple:
    """:func:`_cell_text` of every cell, and the same as a pyarrow string array (or None).

    A column of plain text is done without a call per cell: a pyarrow column (every
    cell text) at once, blank cells becoming null.
    """
    if not isinstance(cells, (list, tuple)):
        import pyarrow as pa
        import pyarrow.compute as pc

        blank = pc.match_substring_regex(cells, f"^[{WHITESPACE_RE2}]*$")
        column = pc.if_else(blank, pa.scalar(None, type=pa.string()), cells)
        return column.to_pylist(), column
    kinds = set(map(type, cells))
    if kinds == {str} and all(map(str.strip, cells)):
        return list(cells), None
    if kinds <= {str, type(None)}:
        return [c if c and c.strip() else None for c in cells], None
    return [_cell_text(c) for c in cells], None


def _text_values(cells) -> list:
    """:func:`_text_value` of every cell; a column of plain text is done without a call per cell."""
    if not isinstance(cells, (list, tuple)):  # a pyarrow column, every cell text
        import pyarrow as pa
        import pyarrow.compute as pc

        stripped = pc.utf8_trim(cells, characters=WHITESPACE)
        return pc.if_else(pc.equal(stripped, ""), pa.scalar(None, type=pa.string()), stripped).to_pylist()
    if set(map(type, cells)) <= {str, type(None)}:
        return [(c.strip() or None) if c is not None else None for c in cells]
    return [_text_value(c) for c in cells]


def normalise(raw: RawTable, mapping: MappingProfile | None = None) -> NormalTable:
    """Interpret a raw table: every problem is collected, nothing raises."""
    from ..units import parse_cells

    rtype, positions, problems, warnings = _resolve_headers(raw, mapping)
    table = NormalTable(raw.source, rtype or "motor", list(raw.row_numbers), problems=problems,
                        warnings=warnings, raw=raw)
    if rtype is None:
        return table
    known = fields_for(rtype)
    n = len(raw.rows)
    by_position = _cells_by_position(raw, list(positions))
    cells_by_field: dict[str, tuple[list, str | None]] = {}
    for pos, (fname, unit) in positions.items():
        cells_by_field[fname] = (by_position[pos], unit)
    if mapping:
        for fname, value in mapping.constants.items():
            if fname not in cells_by_field:
                cells_by_field[fname] = ([value] * n, None)
    for fname, (cells, unit) in cells_by_field.items():
        fdesc = known[fname]
        texts, column = _cell_texts(cells)
        if fdesc.is_numeric:
            dimension = fdesc.dimension or "count"
            si, nums, units, errors, warns = parse_cells(texts, dimension, default_unit=unit, column=column)
            si = np.asarray(si, dtype=float)
            for idx, msg in errors:
                table.problems.append(Problem(raw.source, raw.row_numbers[idx], fname, msg))
                si[idx] = np.nan
            for idx, msg in warns:
                table.warnings.append(Problem(raw.source, raw.row_numbers[idx], fname, msg))
            if fdesc.is_quantity:
                nums = np.asarray(nums, dtype=float)
                ok = ~np.isnan(si) & ~np.isnan(nums)
                table.converted += int(np.count_nonzero(ok & (si != nums)))
            table.columns[fname] = Column(si, texts, list(units), column)
        else:  # an enum value in any case or a synonym is stored as the value, the text as written kept
            table.columns[fname] = Column(fdesc.canonical_texts(_text_values(cells)), texts, [None] * n, column)
    return table
