"""Presenting SI frames in display units (the way out of the program).

Values are stored in SI; users see them in a preset: ``si``, ``datasheet``
(mN·m, rpm, g·cm², °C, ...) or ``imperial`` (oz·in, oz·in², lb, in, °F, ...).
Headers carry the unit: ``stall_torque [mN·m]``.
"""
from __future__ import annotations

__all__ = ["display_frame", "display_value", "LIST_COLUMNS"]

from .fields import fields_for

#: Columns `motorshelf list` shows, per record type.
LIST_COLUMNS = {
    "motor": ["id", "manufacturer", "part_number", "commutation", "nominal_voltage", "no_load_speed",
              "stall_torque", "nominal_torque", "torque_constant", "terminal_resistance", "rotor_inertia",
              "mass", "diameter", "length", "price", "currency"],
    "gearhead": ["id", "manufacturer", "part_number", "ratio", "stages", "efficiency", "max_continuous_torque",
                 "max_intermittent_torque", "max_input_speed", "mass", "diameter", "length", "mount", "price",
                 "currency"],
}


def display_value(si_value: float, dimension: str | None, preset: str = "datasheet") -> tuple[float, str]:
    """(value, unit label) of one SI value in the preset's unit."""
    import numpy as np

    from .units import to_display

    if dimension is None:
        return si_value, ""
    vals, label = to_display(np.asarray([si_value], dtype=float), dimension, preset)
    return float(vals[0]), label


def display_frame(df, record_type: str, preset: str = "datasheet", columns=None):
    """A copy of ``df`` with quantity columns converted to ``preset`` and headers with units."""
    import numpy as np

    from .units import to_display

    fields = fields_for(record_type)
    cols = [c for c in (columns or df.columns) if c in df.columns]
    out = {}
    for c in cols:
        f = fields.get(c)
        if f is not None and f.is_quantity:
            vals, label = to_display(np.asarray(df[c], dtype=float), f.dimension, preset)
            out[f"{c} [{label}]" if label else c] = vals
        else:
            out[c] = df[c].to_numpy()
    import pandas as pd

    return pd.DataFrame(out)
