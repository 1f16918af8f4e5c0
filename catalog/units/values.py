"""Cells -> numbers and units -> SI columns.

Numbers are read strictly: ``12.5``, ``-3``, ``1e-3``, ``1.5E+2``.  A decimal comma
(``1,5``), a thousands separator (``1,500``, ``1 500``, ``1'500``), ``nan`` and
``inf`` are errors that say what to write instead; an empty cell is a missing
value (``None``/NaN).  A column is converted with one cached
:class:`~catalog.units.Conversion` per distinct unit spelling, applied with numpy.
numpy is imported inside the functions, so importing this module stays cheap.
"""
from __future__ import annotations

__all__ = ["parse_number", "split_value_unit", "convert_column", "parse_cells",
           "parse_quantity", "ParsedCells"]

import math
import numbers as _numbers
import re
from typing import Any, NamedTuple, Sequence

from .dimensions import get_dimension
from .errors import NumberError, UnitError
from .spelling import parse_unit

_NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_GROUP_SEP = " \u00a0\u2009\u202f'’"
_COMMA_THOUSANDS = re.compile(r"[+-]?[0-9]{1,3}(?:,[0-9]{3})+(?:\.[0-9]+)?")
_DECIMAL_COMMA = re.compile(r"[+-]?[0-9]*,[0-9]+")
_EURO = re.compile(r"[+-]?[0-9]{1,3}(?:\.[0-9]{3})+,[0-9]+")
_SEP_THOUSANDS = re.compile(rf"[+-]?[0-9]{{1,3}}(?:[{_GROUP_SEP}][0-9]{{3}})+(?:\.[0-9]+)?")
_GLUED_SEP = re.compile(r"[+-]?[0-9]+(?:[.,'’][0-9]+)+")
_SPACED = re.compile(r"[+-]?[0-9]{1,3}(?:[ \u00a0\u2009\u202f][0-9]{3})+(?=$|[ A-Za-zµΩ°%\[(])")
_MINUS = str.maketrans({"−": "-", "\u00a0": " ", "\u2009": " ", "\u202f": " "})
# Fast path of parse_cells: a plain number, optionally followed by a unit that starts
# with a letter or symbol (never a digit, comma, dot, quote or sign).  Everything
# else (decimal commas, thousands separators, nan, ...) takes the strict slow path.
_FAST = re.compile(r"\s*([+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)"
                   r"(?:\s*([^0-9\s,.'’+\-−][^,]*?))?\s*")
_NAN = {"nan", "na", "n/a", ".nan"}  # .nan/.inf: YAML's spellings, read as text
_INF = {"inf", "infinity", "∞", ".inf"}


def _fmt(x: float) -> str:
    return format(x, ".15g")


def _number_value(x) -> float | None:
    """A cell that already is a number: float, or None if NaN; bools rejected."""
    if isinstance(x, bool) or type(x).__name__ == "bool_":
        raise NumberError(str(x), found="a yes/no value", hint="expected a number")
    v = float(x)
    if math.isnan(v):
        return None
    if math.isinf(v):
        raise NumberError(str(x), found="infinity", hint="expected a finite number")
    return v


def _is_number(x) -> bool:
    return isinstance(x, _numbers.Real) or type(x).__name__ == "bool_"


def parse_number(text) -> float | None:
    """Strict number [1] of a cell; ``None`` if empty; :class:`NumberError` if malformed."""
    if text is None:
        return None
    if _is_number(text):
        return _number_value(text)
    s = str(text).translate(_MINUS).strip()
    if not s:
        return None
    if _NUMBER.fullmatch(s):
        v = float(s)
        if math.isinf(v):
            raise NumberError(s, found="a number too large", hint="expected a finite number")
        return v
    low = s.lower().lstrip("+-")
    if low in _NAN:
        raise NumberError(s, found="not-a-number", hint="leave the cell empty for a missing value")
    if low in _INF:
        raise NumberError(s, found="infinity", hint="expected a finite number")
    if _COMMA_THOUSANDS.fullmatch(s):
        hint = f"write {s.replace(',', '')}"
        if s.count(",") == 1 and "." not in s:
            hint += f" (or {s.replace(',', '.')} if the comma is a decimal comma)"
        raise NumberError(s, found="thousands separator", hint=hint)
    if _EURO.fullmatch(s):
        raise NumberError(s, found="decimal comma", hint=f"write {s.replace('.', '').replace(',', '.')}")
    if _DECIMAL_COMMA.fullmatch(s):
        raise NumberError(s, found="decimal comma", hint=f"write {s.replace(',', '.')}")
    if _SEP_THOUSANDS.fullmatch(s):
        plain = re.sub(f"[{_GROUP_SEP}]", "", s)
        raise NumberError(s, found="thousands separator", hint=f"write {plain}")
    raise NumberError(s, found="no number", hint="expected a number such as 12.5")


def split_value_unit(text) -> tuple[float | None, str | None]:
    """``'12.5 oz-in'`` -> ``(12.5, 'oz-in')``; ``'12 V-V'`` -> ``(12.0, 'V-V')``.

    The leading number is read strictly (a hyphen after it is never a minus);
    ``(None, None)`` for an empty cell; ``(number, None)`` when no unit is written.
    """
    if text is None:
        return None, None
    if _is_number(text):
        return _number_value(text), None
    s = str(text).translate(_MINUS).strip()
    if not s:
        return None, None
    m = _NUMBER.match(s)
    if not m:
        first = s.split()[0]
        if first.lower().lstrip("+-") in _NAN | _INF:
            parse_number(first)
        raise NumberError(s, found="no number", hint="expected a number such as 12.5, then a unit")
    glued = _GLUED_SEP.match(s)
    if glued and len(glued.group()) > len(m.group()):
        parse_number(glued.group())  # raises: decimal comma, thousands separator ...
    spaced = _SPACED.match(s)
    if spaced:
        parse_number(spaced.group())  # raises: thousands separator
    value = parse_number(m.group())
    unit = s[m.end():].strip()
    return value, unit or None


class ParsedCells(NamedTuple):
    """Result of :func:`parse_cells`.

    ``si`` [SI unit of the dimension] float array, NaN where missing or wrong;
    ``numbers`` the numbers as written (NaN where missing); ``units`` the unit
    spelling used per cell (the cell's, else ``default_unit``; None if none);
    ``errors``/``warnings``: sorted ``(index, message)`` lists.
    """

    si: Any
    numbers: Any
    units: list
    errors: list
    warnings: list


def _key(u) -> str | None:
    if u is None or (isinstance(u, float) and math.isnan(u)):
        return None
    u = str(u).strip()
    return u or None


def _convert(numbers, units, dimension, default_unit, texts):
    import numpy as np

    dim = get_dimension(dimension)
    nums = np.asarray(numbers, dtype=float).reshape(-1)
    units = list(units)
    if len(units) != len(nums):
        raise ValueError(f"{len(nums)} numbers but {len(units)} units, expected as many units as numbers")
    si = np.full(nums.shape, np.nan)
    errors: list = []
    warnings: list = []
    raw_groups: dict = {}
    for i, u in enumerate(units):  # group by the spelling as written, normalise once per group
        raw_groups.setdefault(u, []).append(i)
    groups: dict = {}
    for u, where in raw_groups.items():
        groups.setdefault(_key(u), []).extend(where)
    default = _key(default_unit)
    unitless_ok = dim.accepts_percent or dim.unitless_only
    for key, where in groups.items():
        idx = np.asarray(where, dtype=np.intp)
        present = idx[~np.isnan(nums[idx])]
        spelling = key if key is not None else default
        if spelling is None and not unitless_ok:
            msg = str(UnitError("", kind="missing", expected=dim.expected))
            errors += [(int(i), msg) for i in present]
            continue
        try:
            conv = parse_unit(spelling or "", dim)
        except UnitError as e:
            for i in present:
                cell = str(texts[i]).strip() if (texts is not None and key is not None) \
                    else f"{_fmt(nums[i])} {spelling}"
                errors.append((int(i), str(e.with_text(cell))))
            continue
        si[idx] = nums[idx] * conv.factor + conv.offset
        for w in conv.warnings:
            warnings += [(int(i), w) for i in present]
    errors.sort(key=lambda t: t[0])
    warnings.sort(key=lambda t: t[0])
    return si, errors, warnings


def convert_column(numbers, units: Sequence[str | None], dimension, default_unit: str | None = None):
    """SI values of a column: ``(si ndarray, errors, warnings)``.

    ``numbers`` float array (NaN = missing); ``units`` one spelling (or None) per
    number; a None unit takes ``default_unit``.  Each distinct spelling is parsed
    once (cached :func:`parse_unit`) and applied to its rows with numpy.  Errors
    and warnings are ``(index, message)`` lists; rows in error are NaN.
    """
    return _convert(numbers, units, dimension, default_unit, None)


def parse_cells(texts: Sequence, dimension, default_unit: str | None = None) -> ParsedCells:
    """Split and convert a column of cells (strings, numbers or None): see :class:`ParsedCells`."""
    import numpy as np

    n = len(texts)
    nums = np.full(n, np.nan)
    units: list = [None] * n
    shown: list = list(texts)
    errors: list = []
    fast = _FAST.fullmatch
    fast_idx: list = []
    fast_num: list = []
    slow: list = []
    for i, cell in enumerate(texts):
        if cell.__class__ is str:
            m = fast(cell)
            if m is not None:
                fast_idx.append(i)
                fast_num.append(m.group(1))
                units[i] = m.group(2)
                continue
        slow.append(i)
    if fast_idx:
        idx = np.asarray(fast_idx, dtype=np.intp)
        vals = np.asarray(fast_num, dtype=float)
        finite = np.isfinite(vals)
        nums[idx[finite]] = vals[finite]
        for i in idx[~finite]:  # overflow such as 1e999: let the strict path say why
            units[i] = None
            slow.append(int(i))
    for i in slow:
        cell = texts[i]
        try:
            value, unit = split_value_unit(cell)
        except UnitError as e:
            errors.append((i, str(e)))
            continue
        if value is not None:
            nums[i], units[i] = value, unit
            shown[i] = str(cell).strip() if isinstance(cell, str) else _fmt(value)
    si, errs, warnings = _convert(nums, units, dimension, default_unit, shown)
    errors = sorted(errors + errs, key=lambda t: t[0])
    default = _key(default_unit)
    used = [u if u is not None else (default if not np.isnan(nums[i]) else None)
            for i, u in enumerate(units)]
    return ParsedCells(si, nums, used, errors, warnings)


def parse_quantity(text, dimension, default_unit: str | None = None) -> float:
    """SI value [SI unit of ``dimension``] of one quantity such as ``'12.5 oz-in'``."""
    dim = get_dimension(dimension)
    value, unit = split_value_unit(text)
    if value is None:
        raise NumberError("" if text is None else str(text), found="no value",
                          hint=f"expected {dim.expected}")
    unit = unit or _key(default_unit)
    if unit is None:
        if dim.accepts_percent or dim.unitless_only:
            return value
        raise UnitError(str(text), kind="missing", expected=dim.expected)
    try:
        conv = parse_unit(unit, dim)
    except UnitError as e:
        raise e.with_text(str(text).strip()) from None
    return float(conv.to_si(value))
