"""Tables with a unit per column: the common form every export writer reads.

A :class:`Table` is a named list of :class:`Column`; each column keeps its SI
values and its values in the chosen display preset (``si``, ``datasheet`` or
``imperial``), the unit label of both, and whether it is a number, an integer,
a flag or text.  Headers carry the unit: ``stall_torque [mN·m]``; a plain
number without a physical dimension (gear ratio, counts, fractions in the
``si`` preset) is labelled ``[1]``, a price ``[currency]`` (the catalogue's
currency column says which).

Nothing here writes a file; :mod:`catalog.export.writers` does.
"""
from __future__ import annotations

__all__ = ["Column", "Table", "table_from_frame", "quantity_column", "text_column",
           "selection_dimensions", "unit_conversion", "clean_number", "UNITLESS", "PRICE_UNIT"]

import math
from dataclasses import dataclass, field

#: Label of a plain number without physical dimension.
UNITLESS = "1"
#: Label of a price column (the currency is in the record's ``currency`` column).
PRICE_UNIT = "currency"

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
    """

    name: str
    kind: str
    values: list
    si: list
    unit: str = ""
    si_unit: str = ""
    dimension: str | None = None

    @property
    def header(self) -> str:
        """``name [unit]`` for numbers, ``name`` for text and flags."""
        return f"{self.name} [{self.unit}]" if self.kind in ("number", "integer") else self.name

    @property
    def si_header(self) -> str:
        return f"{self.name} [{self.si_unit}]" if self.kind in ("number", "integer") else self.name

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


def unit_conversion(dimension: str, preset: str, field_name: str | None = None):
    """``(to_display(si_array) -> array, label)`` for one column.

    Uses the presets of :mod:`catalog.units` (and the per-field exceptions of
    :data:`catalog.present.FIELD_UNITS`); ``None`` dimension → unitless.
    """
    import numpy as np

    from ..present import FIELD_UNITS
    from ..units import parse_unit, to_display

    special = FIELD_UNITS.get(field_name or "", {}).get(preset)
    if special is not None:
        conv = parse_unit(special, dimension)
        return (lambda si: (np.asarray(si, dtype=float) - conv.offset) / conv.factor), special

    def convert(si):
        return to_display(np.asarray(si, dtype=float), dimension, preset)[0]

    def label_for(si):
        return to_display(np.asarray(si, dtype=float), dimension, preset)[1]

    convert.label_for = label_for
    return convert, None


def quantity_column(name: str, si_values, dimension: str | None, preset: str = "datasheet",
                    integer: bool = False) -> Column:
    """A numeric column of SI values shown in ``preset``.

    ``dimension`` is a :data:`catalog.units.DIMENSIONS` name, ``'count'``/None
    for a plain number, or ``'price'`` (not converted).
    """
    import numpy as np

    from ..units import get_dimension

    si = np.asarray([np.nan if _missing(v) else float(v) for v in si_values], dtype=float)
    kind = "integer" if integer else "number"
    if dimension in (None, "count"):
        vals = [clean_number(v, integer) for v in si]
        return Column(name, kind, vals, list(vals), UNITLESS, UNITLESS, dimension)
    if dimension == "price":
        vals = [clean_number(v) for v in si]
        return Column(name, kind, vals, list(vals), PRICE_UNIT, PRICE_UNIT, dimension)
    dim = get_dimension(dimension)
    convert, label = unit_conversion(dimension, preset, name)
    if label is None:
        label = convert.label_for(si)
    shown = convert(si)
    si_label = dim.display["si"][0] or UNITLESS
    label = label or UNITLESS
    return Column(name, kind, [clean_number(v, integer) for v in shown],
                  [clean_number(v) for v in si], label, si_label, dimension)


def text_column(name: str, values, kind: str = "text") -> Column:
    """A text (or ``bool``) column; missing values stay None."""
    out = []
    for v in values:
        if _missing(v):
            out.append(None)
        elif kind == "bool":
            out.append(bool(v))
        else:
            out.append(str(v))
    return Column(name, kind, out, list(out))


def table_from_frame(df, name: str, preset: str = "datasheet", record_type: str | None = None,
                     dimensions: dict | None = None, columns=None, freeze_columns: int = 0) -> Table:
    """A :class:`Table` of an SI DataFrame.

    Column dimensions come from ``dimensions`` (name → dimension), then from the
    field descriptions of ``record_type`` (the schema files); numeric columns of
    neither are plain numbers ``[1]``; everything else is text.
    """
    from ..fields import fields_for

    fields = fields_for(record_type) if record_type else {}
    dims = dict(dimensions or {})
    cols = [c for c in (columns or df.columns) if c in df.columns]
    out = []
    for c in cols:
        series = df[c]
        f = fields.get(c)
        kind = series.dtype.kind
        if kind == "b":
            out.append(text_column(c, series.tolist(), "bool"))
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

    v = series.to_numpy(dtype=float, na_value=np.nan)
    v = v[np.isfinite(v)]
    return bool(v.size) and bool(np.all(v == np.round(v)))
