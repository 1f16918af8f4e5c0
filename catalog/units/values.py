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


#: A calendar date (and time) as a spreadsheet or a reader writes it: 2024-05-01, 2024-05-01 12:00:00.
_DATE = re.compile(r"\s*\d{4}-\d{1,2}-\d{1,2}(?:[ T]\d{1,2}:\d{2}(?::\d{2}(?:\.\d+)?)?)?\s*")


def date_error(text, expected: str = "a number with its unit") -> UnitError | None:
    """The error for a date written where a number belongs (``'2024-05-01'``), else None.

    A spreadsheet cell formatted as a date holds a date, whatever was typed into it.
    """
    if isinstance(text, str) and _DATE.fullmatch(text):
        return UnitError(text.strip(), kind="date", expected=expected,
                         hint="a spreadsheet may have turned the cell into a date; format the column as "
                              "numbers or text and type the value again")
    return None


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
    if (dated := date_error(s)) is not None:
        raise dated
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


def _factorize(units) -> tuple:
    """Codes of ``units`` (-1 for None) and the distinct spellings, in order of first appearance."""
    import numpy as np

    index: dict = {}
    codes = np.fromiter((-1 if u is None else index.setdefault(u, len(index)) for u in units),
                        dtype=np.intp, count=len(units))
    return codes, list(index)


def _convert(nums, codes, spellings, dimension, default_unit, texts):
    """SI values of ``nums`` whose unit spelling is ``spellings[codes[i]]`` (code -1: none written).

    Each distinct spelling is parsed once; cells whose spelling cannot be read get an
    error naming the cell (``texts[i]``, or the number and spelling when ``texts`` is None).
    Returns ``(si, errors, warnings)`` with ``(index, message)`` lists sorted by index.
    """
    import numpy as np

    dim = get_dimension(dimension)
    default = _key(default_unit)
    unitless_ok = dim.accepts_percent or dim.unitless_only
    # one slot per distinct spelling plus a last one for "no unit written" (code -1);
    # spellings equal but for surrounding spaces share one key and one parse
    m = len(spellings)
    factor = np.full(m + 1, np.nan)
    offset = np.full(m + 1, np.nan)
    outcome: dict = {}  # key -> Conversion, or (error, spelling) where it cannot be read
    failed: dict = {}  # slot -> (error or message, spelling, the cell's own text shown?)
    warned: dict = {}  # slot -> warnings
    for slot, written in enumerate([*spellings, None]):
        key = _key(written)
        spelling = key if key is not None else default
        if key not in outcome:
            if spelling is None and not unitless_ok:
                outcome[key] = (str(UnitError("", kind="missing", expected=dim.expected)), None)
            else:
                try:
                    outcome[key] = parse_unit(spelling or "", dim)
                except UnitError as e:
                    outcome[key] = (e, spelling)
        conv = outcome[key]
        if isinstance(conv, tuple):
            failed[slot] = (*conv, key is not None)
            continue
        factor[slot], offset[slot] = conv.factor, conv.offset
        if conv.warnings:
            warned[slot] = conv.warnings
    nums = np.asarray(nums, dtype=float)
    slots = np.where(codes < 0, m, codes)
    si = nums * factor[slots] + offset[slots]
    errors: list = []
    warnings: list = []
    if failed or warned:
        present = ~np.isnan(nums)
        for slot, (err, spelling, own_text) in failed.items():
            for i in np.flatnonzero(present & (slots == slot)):
                if isinstance(err, str):
                    errors.append((int(i), err))
                    continue
                cell = str(texts[i]).strip() if (texts is not None and own_text) \
                    else f"{_fmt(nums[i])} {spelling}"
                errors.append((int(i), str(err.with_text(cell))))
        for slot, warns in warned.items():
            for i in np.flatnonzero(present & (slots == slot)):
                warnings += [(int(i), w) for w in warns]
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
    import numpy as np

    nums = np.asarray(numbers, dtype=float).reshape(-1)
    units = list(units)
    if len(units) != len(nums):
        raise ValueError(f"{len(nums)} numbers but {len(units)} units, expected as many units as numbers")
    codes, spellings = _factorize(units)
    return _convert(nums, codes, spellings, dimension, default_unit, None)


#: Python's whitespace: what ``str.isspace`` accepts, ``str.strip`` removes and ``\\s`` matches.
WHITESPACE = "\t\n\x0b\x0c\r\x1c\x1d\x1e\x1f \x85\xa0\u1680" + "".join(map(chr, range(0x2000, 0x200b))) \
    + "\u2028\u2029\u202f\u205f\u3000"
#: The same characters as the inside of a character class of pyarrow's RE2 patterns.
WHITESPACE_RE2 = ("\\t\\n\\x0b\\x0c\\r\\x1c-\\x1f \\x{85}\\x{a0}\\x{1680}\\x{2000}-\\x{200a}"
                  "\\x{2028}\\x{2029}\\x{202f}\\x{205f}\\x{3000}")
# _FAST for pyarrow's RE2: the same pattern with Python's \s spelled out.
_FAST_RE2 = (rf"^[{WHITESPACE_RE2}]*(?P<number>[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)"
             rf"(?:[{WHITESPACE_RE2}]*(?P<unit>[^0-9{WHITESPACE_RE2},.'’+\-−][^,]*?))?[{WHITESPACE_RE2}]*$")


def _split_fast(texts, column=None):
    """The cells of a column of text that :data:`_FAST` reads, split at once with pyarrow.

    ``column``, if given, holds ``texts`` as a pyarrow string array (None as null).

    Returns ``(matched, numbers, codes, spellings)``: a bool array of the cells read
    (finite numbers only), their numbers, and per cell the index of its unit spelling
    in ``spellings`` (-1: none written or not read).  None when the column holds
    anything but ``str`` and None, or text pyarrow cannot hold: the caller reads it
    cell by cell.  Every cell not matched here takes the strict path of
    :func:`split_value_unit`, exactly as when reading cell by cell.
    """
    import numpy as np
    import pyarrow as pa
    import pyarrow.compute as pc

    if column is None and not set(map(type, texts)) <= {str, type(None)}:
        return None
    try:
        if column is None:
            column = pa.array(texts, type=pa.string())
        parts = pc.extract_regex(column, _FAST_RE2)  # null where the pattern does not match
        numbers = pc.cast(pc.struct_field(parts, "number"), pa.float64()).to_numpy(zero_copy_only=False)
    except (pa.ArrowException, UnicodeError):  # lone surrogates, a number pyarrow cannot cast
        return None
    matched = np.isfinite(numbers)  # NaN where not matched; an overflow (inf) takes the strict path
    units = pc.struct_field(parts, "unit").dictionary_encode()  # '' where no unit is written
    spellings = units.dictionary.to_pylist()
    position = {u: k for k, u in enumerate(u for u in spellings if u != "")}
    lookup = np.array([position.get(u, -1) for u in spellings] + [-1], dtype=np.intp)
    indices = pc.fill_null(units.indices, len(spellings)).to_numpy(zero_copy_only=False)
    codes = np.where(matched, lookup[indices], -1)
    # only the spellings of cells read here: the others are read (and worded) cell by cell
    used = np.unique(codes[codes >= 0])
    remap = np.full(len(position) + 1, -1, dtype=np.intp)
    remap[used] = np.arange(len(used))
    names = list(position)
    return matched, np.where(matched, numbers, np.nan), remap[codes], [names[k] for k in used]


def parse_cells(texts: Sequence, dimension, default_unit: str | None = None, column=None) -> ParsedCells:
    """Split and convert a column of cells (strings, numbers or None): see :class:`ParsedCells`.

    A column of text is split with pyarrow (:func:`_split_fast`); the cells it does not
    read, and columns of other cells, are read one by one with :data:`_FAST` and, failing
    that, :func:`split_value_unit`.  Both give the same numbers, units and messages.
    ``column``, if given, holds ``texts`` (all text or None) as a pyarrow string array.
    """
    import numpy as np

    n = len(texts)
    shown: list = list(texts)
    errors: list = []
    fast = _split_fast(texts, column) if n else None
    if fast is not None:
        matched, nums, codes, spellings = fast
        rest = np.flatnonzero(~matched).tolist()
    else:
        nums, codes, spellings = np.full(n, np.nan), np.full(n, -1, dtype=np.intp), []
        rest = range(n)
    index = {u: k for k, u in enumerate(spellings)}
    fast_re = _FAST.fullmatch
    for i in rest:  # cell by cell: what pyarrow did not read
        cell = texts[i]
        unit = None
        m = fast_re(cell) if cell.__class__ is str else None
        if m is not None and math.isfinite(value := float(m.group(1))):
            nums[i], unit = value, m.group(2)
        else:  # the strict path, which also says why a cell cannot be read
            try:
                value, unit = split_value_unit(cell)
            except UnitError as e:
                errors.append((i, str(e)))
                continue
            if value is None:
                continue
            nums[i] = value
            shown[i] = str(cell).strip() if isinstance(cell, str) else _fmt(value)
        if unit is not None:
            codes[i] = index.setdefault(unit, len(index))
    spellings = list(index)
    si, errs, warnings = _convert(nums, codes, spellings, dimension, default_unit, shown)
    errors = sorted(errors + errs, key=lambda t: t[0])
    if errors:   # a date (read as '2024' and the unit '-05-01', or refused whole) is said to be a date
        expected = get_dimension(dimension).expected
        errors = [(i, str(d)) if (d := date_error(texts[i], expected)) is not None else (i, m)
                  for i, m in errors]
    written = np.array([*spellings, _key(default_unit)], dtype=object)  # last: the default
    used = written[np.where(codes < 0, len(spellings), codes)]
    used[np.isnan(nums)] = None
    return ParsedCells(si, nums, used.tolist(), errors, warnings)


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
