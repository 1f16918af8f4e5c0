"""Column-wise checks derived from the schema files.

A per-record jsonschema call costs about a third of a millisecond, far too slow for a
catalogue of 100k rows, so the checks the schema states (types, ranges, enums,
required fields, patterns, lengths) are derived once from :mod:`catalog.fields`
and applied to whole columns with numpy/pandas.  The schema files stay the one
source of truth; ``tests/test_validate.py`` checks that this and jsonschema agree.
"""
from __future__ import annotations

__all__ = ["column_problems", "check_table"]

import re

import numpy as np

from .fields import Field, fields_for


def _fmt(value: float) -> str:
    return f"{value:.6g}"


def column_problems(field: Field, values, raw=None) -> list[tuple[int, str]]:
    """Problems of one column: list of (position, message).

    ``values`` holds SI numbers (NaN for missing) for numeric fields, or text (None
    for missing) for string fields; ``raw`` optionally the text as written, used in
    messages.
    """
    out: list[tuple[int, str]] = []

    def found(i: int) -> str:
        if raw is not None and raw[i] not in (None, ""):
            return repr(str(raw[i]))
        return _fmt(values[i]) if field.is_numeric else repr(values[i])

    if field.is_numeric:
        arr = np.asarray(values, dtype=float)
        present = ~np.isnan(arr)
        if field.required:
            for i in np.flatnonzero(~present):
                out.append((int(i), "missing, expected a value"))
        bad_inf = present & ~np.isfinite(arr)
        for i in np.flatnonzero(bad_inf):
            out.append((int(i), f"{found(i)} is not finite, expected a finite number"))
        ok = present & np.isfinite(arr)
        unit = ""
        if field.dimension:
            from .units import DIMENSIONS  # local: keep import light

            unit = " " + DIMENSIONS[field.dimension].si_unit if field.dimension != "dimensionless" else ""
        if field.kind == "integer":
            for i in np.flatnonzero(ok & (arr != np.round(arr))):
                out.append((int(i), f"{found(i)} is not a whole number, expected an integer"))
        if field.exclusive_minimum is not None:
            lim = field.exclusive_minimum
            for i in np.flatnonzero(ok & ~(arr > lim)):
                what = "positive" if lim == 0 else f"> {_fmt(lim)}{unit}"
                out.append((int(i), f"{found(i)} is {_fmt(arr[i])}{unit} in SI, expected {what}"))
        if field.minimum is not None:
            lim = field.minimum
            for i in np.flatnonzero(ok & ~(arr >= lim)):
                what = "zero or more" if lim == 0 else f">= {_fmt(lim)}{unit}"
                out.append((int(i), f"{found(i)} is {_fmt(arr[i])}{unit} in SI, expected {what}"))
        if field.maximum is not None:
            lim = field.maximum
            for i in np.flatnonzero(ok & ~(arr <= lim)):
                out.append((int(i), f"{found(i)} is {_fmt(arr[i])}{unit} in SI, expected at most {_fmt(lim)}{unit}"))
        return out

    # text fields
    n = len(values)
    for i in range(n):
        v = values[i]
        missing = v is None or (isinstance(v, float) and np.isnan(v)) or (isinstance(v, str) and v.strip() == "")
        if missing:
            if field.required:
                out.append((i, "missing, expected a value"))
            continue
        s = str(v)
        if field.enum is not None and s not in field.enum:
            out.append((i, f"{s!r} is not allowed, expected one of {', '.join(field.enum)}"))
        if field.pattern is not None and not re.search(field.pattern, s):
            form = field.pattern_words or field.pattern
            out.append((i, f"{s!r} does not match the expected form {form}"))
        if field.max_length is not None and len(s) > field.max_length:
            out.append((i, f"text of {len(s)} characters, expected at most {field.max_length}"))
    return out


def check_table(record_type: str, columns: dict, raw: dict | None = None) -> list[tuple[int, str, str]]:
    """Check every known column of a table at once.

    ``columns`` maps field name -> SI values (numeric) or texts; ``raw`` maps field
    name -> raw texts.  Required fields missing as whole columns are reported for
    every row.  Returns (position, field, message) sorted by position.
    """
    fields = fields_for(record_type)
    n = len(next(iter(columns.values()))) if columns else 0
    out: list[tuple[int, str, str]] = []
    for name, field in fields.items():
        if name not in columns:
            if field.required:
                out.extend((i, name, "missing, expected a value") for i in range(n))
            continue
        for pos, msg in column_problems(field, columns[name], (raw or {}).get(name)):
            out.append((pos, name, msg))
    out.sort(key=lambda t: (t[0], t[1]))
    return out
