"""Tables with a unit per column: the common form every export writer reads.

A :class:`Table` is a named list of :class:`Column`; each column keeps its SI
values and its values in the chosen display preset (``si``, ``metric`` or
``imperial``), the unit label of both, and whether it is a number, an integer,
a flag or text.  Headers carry the unit: ``stall_torque [mN·m]``; a plain
number without a physical dimension (gear ratio, counts, fractions in the
``si`` preset) is labelled ``[1]``, a price with its currency (``price [EUR]``;
a table of several currencies gets one price column per currency,
:func:`price_columns`).

Every number keeps its significant digits on screen: a column may carry the
digits each value wants (:attr:`Column.digits`: at least three, more where the
datasheet gave more, :func:`given_digits`) and :func:`display_format` turns a
value and its digits into a spreadsheet number format.

Nothing here writes a file; :mod:`catalog.export.writers` does.
"""
from __future__ import annotations

__all__ = ["Column", "Table", "table_from_frame", "quantity_column", "text_column",
           "selection_dimensions", "unit_conversion", "clean_number", "UNITLESS", "PRICE_UNIT", "MIN_DIGITS",
           "MAX_DIGITS", "display_format", "given_digits", "significant_digits", "price_columns",
           "si_unit_label", "apply_given_digits", "NO_CURRENCY"]

import math
from dataclasses import dataclass, field

#: Label of a plain number without physical dimension.
UNITLESS = "1"
#: Label of a price column whose currency nobody knows (no ``currency`` column at hand).
PRICE_UNIT = "currency"
#: Label of the prices of records that give no currency.
NO_CURRENCY = "currency not given"
#: Significant digits every shown number keeps, and the most a datasheet value is shown with.
MIN_DIGITS = 3
MAX_DIGITS = 6

#: Dimensions of the numeric columns of a selection's shortlist and rejected frames besides the check
#: registry's margins and values (:func:`selection_dimensions` adds those).
_SELECTION_BASE = {
    "rank": "count",
    "ratio": None,
    "winding_temperature": "temperature",
    "rms_current": "current",
    "peak_current": "current",
    "energy_per_cycle": "energy",
    "mass": "mass",
    "length": "length",
    "diameter": "length",
    "price": "price",
    "efficiency": "dimensionless",
    "available": "count",          # shelf columns of a stock-aware selection
    "motor_available": "count",
    "gear_available": "count",
    "stock_tier": "count",
}


def selection_dimensions() -> dict:
    """Column -> dimension of a selection's frames: the base columns and every registered check's margin
    and values (:mod:`catalog.select.registry`), so a new check is exported with its unit."""
    from ..select.registry import margins, value_columns

    dims = dict(_SELECTION_BASE)
    dims.update({m.column: m.dimension for m in margins()})
    dims["smallest_margin"] = "dimensionless"
    dims.update(value_columns())
    return dims


@dataclass
class Column:
    """One column: SI values, display values and their units.

    ``kind`` is ``number``, ``integer``, ``bool`` or ``text``.  ``si`` and
    ``values`` are lists of the same length (None for a missing value);
    ``unit`` is the display label, ``si_unit`` the SI label (``''`` for text).
    ``digits`` (optional, same length) holds the significant digits each value
    is shown with (None: :data:`MIN_DIGITS`); ``title`` replaces the name in the
    header (``price_USD`` is headed ``price [USD]``).
    """

    name: str
    kind: str
    values: list
    si: list
    unit: str = ""
    si_unit: str = ""
    dimension: str | None = None
    digits: list | None = None
    title: str | None = None

    @property
    def header(self) -> str:
        """``name [unit]`` for numbers, ``name`` for text and flags."""
        name = self.title or self.name
        return f"{name} [{self.unit}]" if self.kind in ("number", "integer") else name

    @property
    def si_header(self) -> str:
        name = self.title or self.name
        return f"{name} [{self.si_unit}]" if self.kind in ("number", "integer") else name

    def cell_format(self, i: int) -> str:
        """The spreadsheet number format of row ``i`` (see :func:`display_format`)."""
        if self.kind == "integer":
            return "0"
        if self.dimension == "price":
            return "0.00"
        d = self.digits[i] if self.digits is not None else None
        return display_format(self.values[i], d or MIN_DIGITS)

    @property
    def is_numeric(self) -> bool:
        return self.kind in ("number", "integer")


@dataclass
class Table:
    """A named list of columns of equal length (one sheet, one CSV file)."""

    name: str
    columns: list = field(default_factory=list)
    note: str = ""
    freeze_columns: int = 0    # leading columns kept in view in a spreadsheet

    def __len__(self) -> int:
        return len(self.columns[0].values) if self.columns else 0

    def column(self, name: str) -> Column:
        for c in self.columns:
            if c.name == name:
                return c
        raise KeyError(name)

    @property
    def units(self) -> dict:
        """Column name → display unit, numeric columns only."""
        return {c.name: c.unit for c in self.columns if c.is_numeric}

    def records(self, si: bool = False) -> list[dict]:
        """One dict per row, keyed by plain column names (no units)."""
        cols = [(c.name, c.si if si else c.values) for c in self.columns]
        return [{name: vals[i] for name, vals in cols} for i in range(len(self))]

    def frame(self, si: bool = False):
        """A pandas DataFrame with unit headers (display or SI values)."""
        import pandas as pd

        return pd.DataFrame({(c.si_header if si else c.header): (c.si if si else c.values)
                             for c in self.columns})


def _missing(v) -> bool:
    if v is None:
        return True
    try:
        return bool(v != v)  # NaN, pd.NA raises TypeError below
    except TypeError:
        return True


def clean_number(v, integer: bool = False):
    """``v`` as a plain Python number for a table cell: None for missing, ``integer`` rounded to an int,
    any other rounded to 12 significant digits (infinities kept)."""
    if _missing(v):
        return None
    f = float(v)
    if math.isinf(f):
        return f
    if integer:
        return int(round(f))
    return float(f"{f:.12g}")


def significant_digits(text) -> int | None:
    """Significant digits of the number a datasheet cell starts with; None if it holds none.

    ``'0.4500 mH'`` → 4, ``'7.33'`` → 3, ``'0.00045'`` → 2, ``'1200'`` → 2 (trailing
    zeros of a whole number are not counted: they may be padding), ``'1.20e3'`` → 3.
    """
    import re

    if not isinstance(text, str):
        return None
    m = re.match(r"\s*[-+]?(\d*)(?:\.(\d*))?(?:[eE][-+]?\d+)?", text)
    if not m or not (m.group(1) or m.group(2)):
        return None
    whole, frac = m.group(1) or "", m.group(2)
    if frac is None:
        digits = whole.lstrip("0").rstrip("0")
        return max(1, len(digits))
    digits = (whole + frac).lstrip("0")
    return max(1, len(digits))


def given_digits(text) -> int:
    """Digits a value given as ``text`` is shown with: at least :data:`MIN_DIGITS`, at most :data:`MAX_DIGITS`."""
    n = significant_digits(text)
    return MIN_DIGITS if n is None else max(MIN_DIGITS, min(MAX_DIGITS, n))


def display_format(value, digits: int = MIN_DIGITS) -> str:
    """A spreadsheet number format showing ``value`` with ``digits`` significant digits.

    Fixed decimals from the value's own magnitude (0.45 → ``0.450``, 7.33 →
    ``7.33``, 0.00045 → ``0.000450``, 3470 → ``0``: a whole number shows all its
    digits); scientific (``0.00E+00``) below 1e-4 and from 1e9; ``0`` for zero.
    """
    if value is None or not isinstance(value, (int, float)) or value != value or math.isinf(value) or value == 0:
        return "0"
    digits = max(1, int(digits))
    exponent = int(f"{abs(float(value)):.{digits - 1}e}".split("e")[1])   # after rounding: 9.996 → 10.0
    if exponent < -4 or exponent >= 9:
        return "0." + "0" * (digits - 1) + "E+00" if digits > 1 else "0E+00"
    decimals = max(0, digits - 1 - exponent)
    return "0" if decimals == 0 else "0." + "0" * decimals


def si_unit_label(dimension: str | None, field_name: str | None = None) -> str:
    """The SI label of a column (``V·s/rad`` for a back-EMF constant, ``N·m/A`` for a torque constant)."""
    from ..present import field_unit
    from ..units import get_dimension

    if dimension is None:
        return UNITLESS
    return field_unit(field_name, "si") or get_dimension(dimension).display["si"][0] or UNITLESS


def unit_conversion(dimension: str, preset: str, field_name: str | None = None):
    """``(to_display(si_array) -> array, label)`` for one column.

    Uses the presets of :mod:`catalog.units` (and the per-field exceptions of
    :data:`catalog.present.FIELD_UNITS`); ``None`` dimension → unitless.
    The unit is chosen once for all the values given (by their largest magnitude).
    """
    import numpy as np

    from ..present import field_unit
    from ..units import parse_unit, to_display

    special = field_unit(field_name, preset)
    if special is not None:
        conv = parse_unit(special, dimension)
        return (lambda si: (np.asarray(si, dtype=float) - conv.offset) / conv.factor), special

    def convert(si):
        return to_display(np.asarray(si, dtype=float), dimension, preset)[0]

    def label_for(si):
        return to_display(np.asarray(si, dtype=float), dimension, preset)[1]

    convert.label_for = label_for
    return convert, None


def quantity_column(name: str, si_values, dimension: str | None, preset: str = "metric",
                    integer: bool = False, currency: str | None = None) -> Column:
    """A numeric column of SI values shown in ``preset``.

    ``dimension`` is a :data:`catalog.units.DIMENSIONS` name, ``'count'``/None
    for a plain number, or ``'price'`` (not converted; labelled ``currency``,
    :data:`PRICE_UNIT` when none is given).
    """
    import numpy as np

    si = np.asarray([np.nan if _missing(v) else float(v) for v in si_values], dtype=float)
    kind = "integer" if integer else "number"
    if dimension in (None, "count"):
        vals = [clean_number(v, integer) for v in si]
        return Column(name, kind, vals, list(vals), UNITLESS, UNITLESS, dimension)
    if dimension == "price":
        vals = [clean_number(v) for v in si]
        unit = currency or PRICE_UNIT
        return Column(name, kind, vals, list(vals), unit, unit, dimension)
    convert, label = unit_conversion(dimension, preset, name)
    if label is None:
        label = convert.label_for(si)
    shown = convert(si)
    si_label = si_unit_label(dimension, name)
    label = label or UNITLESS
    return Column(name, kind, [clean_number(v, integer) for v in shown],
                  [clean_number(v) for v in si], label, si_label, dimension)


def price_columns(name: str, prices, currencies) -> list:
    """Price columns headed by their currency: one column if one currency, else one per currency.

    ``prices`` and ``currencies`` run in parallel (a record's price is in its
    record's currency).  Prices of several currencies are never put in one column
    (sorting them would compare euros with dollars): ``price_EUR [EUR]``,
    ``price_USD [USD]`` ..., headed ``price [EUR]`` ..., each empty where the
    record is priced in another currency; prices of records without a currency go
    to a column headed ``price [currency not given]``.
    """
    prices = list(prices)
    curr = [c if isinstance(c, str) and c.strip() else None for c in currencies]
    priced = [c for p, c in zip(prices, curr) if not _missing(p)]
    used = sorted({c for c in priced if c is not None})
    if None in priced:
        used.append(None)
    if len(used) <= 1:
        unit = (used[0] if used else None) or (NO_CURRENCY if used else PRICE_UNIT)
        return [quantity_column(name, prices, "price", currency=unit)]
    out = []
    for code in used:
        vals = [p if c == code else None for p, c in zip(prices, curr)]
        col = quantity_column(f"{name}_{code or 'unknown'}", vals, "price", currency=code or NO_CURRENCY)
        col.title = name
        out.append(col)
    return out


def apply_given_digits(table, values, id_column: str = "id") -> None:
    """Set :attr:`Column.digits` of ``table`` from the datasheet text of each value.

    ``values`` is a frame of ``record_values`` rows (``record_id``, ``field``,
    ``raw_text``, ``origin``); a given value is shown with as many significant
    digits as its datasheet text had (at least :data:`MIN_DIGITS`, :func:`given_digits`),
    a derived one with :data:`MIN_DIGITS`.
    """
    if len(values) == 0 or id_column not in [c.name for c in table.columns]:
        return
    given = values[values["origin"] == "given"]
    digits = {(r, f): given_digits(t) for r, f, t in zip(given["record_id"], given["field"], given["raw_text"])}
    ids = table.column(id_column).values
    for col in table.columns:
        if col.kind != "number" or col.dimension == "price":
            continue
        col.digits = [digits.get((rid, col.name), MIN_DIGITS) for rid in ids]


def text_column(name: str, values, kind: str = "text") -> Column:
    """A text (or ``bool``) column; missing values stay None."""
    if kind == "bool":
        out = [None if _missing(v) else bool(v) for v in values]
    else:   # a plain str is its own text (the common case, without the missing-value test)
        out = [v if type(v) is str else (None if _missing(v) else str(v)) for v in values]
    return Column(name, kind, out, list(out))


def table_from_frame(df, name: str, preset: str = "metric", record_type: str | None = None,
                     dimensions: dict | None = None, columns=None, freeze_columns: int = 0) -> Table:
    """A :class:`Table` of an SI DataFrame (or of a mapping column → numpy array, texts as object arrays).

    Column dimensions come from ``dimensions`` (name → dimension), then from the
    field descriptions of ``record_type`` (the schema files); numeric columns of
    neither are plain numbers ``[1]``; everything else is text.  A ``price``
    column is headed by the frame's ``currency`` column (:func:`price_columns`).
    """
    from ..fields import fields_for

    fields = fields_for(record_type) if record_type else {}
    dims = dict(dimensions or {})
    present = list(df.columns) if hasattr(df, "columns") else list(df)
    cols = [c for c in (columns or present) if c in present]
    out = []
    for c in cols:
        series = df[c]
        f = fields.get(c)
        kind = series.dtype.kind
        if kind == "b":
            out.append(text_column(c, series.tolist(), "bool"))
            continue
        if c == "price" and dims.get(c, "price") == "price" and (f is not None or c in dims):
            if "currency" in present:
                out.extend(price_columns(c, series.tolist(), df["currency"].tolist()))
            else:
                out.append(quantity_column(c, series.tolist(), "price"))
            continue
        if f is not None:
            if not f.is_numeric:
                out.append(text_column(c, series.tolist()))
                continue
            dim = "price" if c == "price" else f.dimension
            out.append(quantity_column(c, series.tolist(), dims.get(c, dim), preset, f.kind == "integer"))
            continue
        if c in dims or kind in "fiu":
            dim = dims.get(c)
            integer = kind in "iu" or dim == "count" and _all_whole(series)
            out.append(quantity_column(c, series.tolist(), dim, preset, integer))
            continue
        out.append(text_column(c, series.tolist()))
    return Table(name, out, freeze_columns=freeze_columns)


def _all_whole(series) -> bool:
    import numpy as np

    v = series.to_numpy(dtype=float, na_value=np.nan) if hasattr(series, "to_numpy") else \
        np.asarray(series, dtype=float)
    v = v[np.isfinite(v)]
    return bool(v.size) and bool(np.all(v == np.round(v)))
