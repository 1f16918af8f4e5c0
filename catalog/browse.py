"""Browsing the catalogue: filter by field ranges and text, sort, page, in display units.

A query-layer helper over the wide SI frames of :meth:`catalog.api.Catalog.motors` /
``gearheads``: every step is a whole-column operation (no loop per record), so a page
of a 100k-record catalogue is a few vectorised masks, one stable sort and a slice.

Filters come as text, the way a person types them: a bound of a quantity field is a
number in the unit the page shows that field in (``200`` with mass shown in g), or a
number with its own unit read by the datasheet parser (``0.5 lb``, ``12 oz-in``);
text fields match where they contain the text (ignoring case).  Every mistake is a
:class:`~catalog.errors.Problem` naming the filter key, what was found and what was
expected, and the whole request is refused (:class:`~catalog.errors.InputError`).
"""
from __future__ import annotations

__all__ = ["Page", "ColumnUnit", "column_units", "parse_filters", "browse", "Filter", "SORT_ORDERS",
           "KINDS", "si_units"]

from dataclasses import dataclass, field

from .errors import InputError, Problem
from .fields import fields_for

#: Plural kind of the pages and the API → record type.
KINDS = {"motors": "motor", "gearheads": "gearhead"}
SORT_ORDERS = ("asc", "desc")
#: Columns searched by the free-text filter ``q``.
TEXT_SEARCH = ("id", "manufacturer", "part_number")


@dataclass(frozen=True)
class ColumnUnit:
    """How a column is shown: ``display = (si - offset) / factor`` in ``label``."""

    label: str
    factor: float = 1.0
    offset: float = 0.0

    def to_display(self, values):
        return (values - self.offset) / self.factor


@dataclass(frozen=True)
class Filter:
    """One condition: ``low <= field <= high`` (SI) for numbers, ``contains`` for text."""

    field: str
    low: float | None = None
    high: float | None = None
    contains: str | None = None


@dataclass
class Page:
    """One page of a browse: the rows (SI, every column) and what it was cut from."""

    rows: object            # pandas DataFrame, SI
    total: int              # records matching the filters
    offset: int
    limit: int
    sort: str
    order: str
    units: dict = field(default_factory=dict)   # field -> ColumnUnit of the preset

    @property
    def pages(self) -> int:
        return max(1, -(-self.total // self.limit)) if self.limit else 1

    @property
    def number(self) -> int:
        return self.offset // self.limit + 1 if self.limit else 1


def _unit_of(f, column, preset: str) -> ColumnUnit | None:
    import numpy as np

    from .present import FIELD_UNITS
    from .units import parse_unit, to_display

    if not f.is_quantity:
        return None
    label = FIELD_UNITS.get(f.name, {}).get(preset)
    if label is None:  # the preset's unit "as fits" the whole column, so every page shows one unit
        label = to_display(np.asarray(column, dtype=float), f.dimension, preset)[1]
    conv = parse_unit(label, f.dimension)
    return ColumnUnit(label, float(conv.factor), float(conv.offset))


def si_units(record_type: str) -> dict:
    """field → :class:`ColumnUnit` in SI of every quantity field (bounds of the JSON API)."""
    from .units import get_dimension

    return {name: ColumnUnit(get_dimension(f.dimension).display["si"][0])
            for name, f in fields_for(record_type).items() if f.is_quantity and get_dimension(f.dimension).display["si"][0]}


def column_units(frame, record_type: str, preset: str = "datasheet") -> dict:
    """field → :class:`ColumnUnit` of every quantity column of ``frame`` in ``preset``."""
    out = {}
    for name, f in fields_for(record_type).items():
        if name in frame.columns:
            unit = _unit_of(f, frame[name], preset)
            if unit is not None:
                out[name] = unit
    return out


def _bound(key: str, text: str, f, unit: ColumnUnit | None, problems: list) -> float | None:
    import math

    from .units import UnitError, parse_quantity

    text = " ".join(str(text).split())
    if not text:
        return None
    try:
        if f.is_quantity:
            value = parse_quantity(text, f.dimension, default_unit=unit.label if unit else None)
        else:
            value = float(text.replace("_", ""))
    except (UnitError, ValueError) as exc:
        message = getattr(exc, "message", None) or str(exc)
        shown = f"a number in {unit.label}, or a number with its unit" if unit else "a number"
        problems.append(Problem(key, None, None, f"{text!r}: {message}; expected {shown}"))
        return None
    if not math.isfinite(value):
        problems.append(Problem(key, None, None, f"{text!r} is not a finite number, expected e.g. 12.5"))
        return None
    return float(value)


def parse_filters(record_type: str, params, units: dict | None = None) -> list[Filter]:
    """Filters from ``params`` (a mapping of text): ``FIELD.min``, ``FIELD.max`` (quantities and
    numbers), ``FIELD`` (text fields: contains; numbers: equals).

    Bounds without a unit are in ``units[FIELD].label`` (see :func:`column_units`), else SI.
    Keys that name no field are refused, so a misspelt filter never silently shows everything.
    Raises :class:`InputError` with one problem per mistake.
    """
    fields = fields_for(record_type)
    units = units or {}
    problems: list = []
    ranges: dict = {}
    out = []
    for key, text in params.items():
        name, _, end = key.partition(".")
        f = fields.get(name)
        if f is None or (end and end not in ("min", "max")) or (end and not f.is_numeric):
            close = [n for n in fields if n.startswith(name[:4])][:3] if name else []
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            problems.append(Problem(key, None, None, f"no such filter, expected FIELD.min or FIELD.max "
                                                     f"(a {record_type} number field) or a {record_type} field{hint}"))
            continue
        if text is None or not str(text).strip():
            continue
        if f.is_numeric:
            value = _bound(key, text, f, units.get(name), problems)
            if value is None:
                continue
            low, high = ranges.get(name, (None, None))
            if end in ("", "min"):
                low = value
            if end in ("", "max"):
                high = value
            ranges[name] = (low, high)
        else:
            out.append(Filter(name, contains=" ".join(str(text).split())))
    for name, (low, high) in ranges.items():
        if low is not None and high is not None and low > high:
            problems.append(Problem(f"{name}.min", None, None,
                                    f"is above {name}.max, expected a range from the smaller to the larger"))
            continue
        out.append(Filter(name, low=low, high=high))
    if problems:
        raise InputError(f"{len(problems)} problem(s) in the filters", problems)
    return out


def browse(frame, record_type: str, filters=(), text: str | None = None, sort: str = "id",
           order: str = "asc", offset: int = 0, limit: int = 50, preset: str | None = None) -> Page:
    """The page of ``frame`` (SI, one column per field) matching ``filters`` and ``text``,
    sorted by ``sort`` (missing values last, ties by id), ``limit`` rows from ``offset``.

    ``preset`` adds the display unit of every quantity column (``Page.units``), chosen
    on the whole catalogue column so that every page shows the same units.
    """
    import numpy as np

    fields = fields_for(record_type)
    problems = []
    if sort not in fields:
        problems.append(Problem("sort", None, None, f"{sort!r} is not a {record_type} field"))
    if order not in SORT_ORDERS:
        problems.append(Problem("order", None, None, f"{order!r}, expected asc or desc"))
    if not 1 <= int(limit) <= 1000:
        problems.append(Problem("limit", None, None, f"{limit}, expected 1 to 1000 records a page"))
    if int(offset) < 0:
        problems.append(Problem("offset", None, None, f"{offset}, expected 0 or more"))
    if problems:
        raise InputError(f"{len(problems)} problem(s) in the request", problems)
    n = len(frame)
    mask = np.ones(n, dtype=bool)
    for flt in filters:
        if flt.field not in frame.columns:
            mask[:] = False
            continue
        col = frame[flt.field]
        if flt.contains is not None:
            mask &= col.astype("string").str.contains(flt.contains, case=False, regex=False).fillna(False).to_numpy(bool)
            continue
        values = col.to_numpy(dtype=float, na_value=np.nan)
        if flt.low is not None:
            mask &= values >= flt.low - abs(flt.low) * 1e-9   # a bound typed from a shown value still matches
        if flt.high is not None:
            mask &= values <= flt.high + abs(flt.high) * 1e-9
    if text and text.strip():
        needle = " ".join(text.split())
        hit = np.zeros(n, dtype=bool)
        for c in TEXT_SEARCH:
            if c in frame.columns:
                hit |= frame[c].astype("string").str.contains(needle, case=False, regex=False).fillna(False).to_numpy(bool)
        mask &= hit
    rows = np.flatnonzero(mask)
    ids = frame["id"].to_numpy(dtype=object)[rows].astype(str)
    if sort == "id":
        key_order = np.argsort(ids, kind="stable")
        if order == "desc":
            key_order = key_order[::-1]
    else:
        col = frame[sort]
        if fields[sort].is_numeric:
            values = col.to_numpy(dtype=float, na_value=np.nan)[rows]
            missing = np.isnan(values)
            keyed = -values if order == "desc" else values
            key_order = np.lexsort((ids, np.where(missing, 0.0, keyed), missing))
        else:
            texts = col.astype("string").fillna("").to_numpy(dtype=object)[rows].astype(str)
            missing = texts == ""
            ranks = np.unique(np.char.lower(texts), return_inverse=True)[1]
            key_order = np.lexsort((ids, -ranks if order == "desc" else ranks, missing))
    picked = rows[key_order][int(offset):int(offset) + int(limit)]
    units = column_units(frame, record_type, preset) if preset else {}
    return Page(frame.iloc[picked].reset_index(drop=True), int(len(rows)), int(offset), int(limit), sort, order,
                units)
