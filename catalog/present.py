"""Presenting SI frames in display units (the way out of the program), for every face alike.

Values are stored in SI; users see them in a preset: ``si``, ``metric``
(mN·m, rpm, g·cm², °C, ...; also read under its older name ``datasheet``) or ``imperial`` (oz·in, oz·in², lb, in, °F, ...).
Headers carry the unit: ``stall_torque [mN·m]``.
"""
from __future__ import annotations

__all__ = ["display_frame", "display_value", "display_shortlist", "LIST_COLUMNS", "FIELD_UNITS", "field_unit"]

from .fields import fields_for

#: Columns `motorshelf list` shows, per record type.
LIST_COLUMNS = {
    "motor": ["id", "commutation", "nominal_voltage", "no_load_speed", "stall_torque", "nominal_torque",
              "torque_constant", "terminal_resistance", "mass", "diameter", "mount", "price", "currency"],
    "gearhead": ["id", "ratio", "stages", "efficiency", "max_continuous_torque", "max_intermittent_torque",
                 "max_input_speed", "mass", "diameter", "mount", "price", "currency"],
}


#: Fields shown in another unit than their dimension's preset (datasheet habit; the
#: back-EMF constant shares the torque constant's dimension, but its SI unit is V·s/rad).
FIELD_UNITS = {
    "back_emf_constant": {"si": "V·s/rad", "metric": "mV/rpm", "imperial": "V/krpm"},
    "lead_time": {"metric": "d", "imperial": "d"},     # a delivery time in days, not in minutes
}


def field_unit(field_name: str | None, preset: str) -> str | None:
    """The unit ``field_name`` is always shown in under ``preset`` (:data:`FIELD_UNITS`), or None."""
    from .units import preset_name

    return FIELD_UNITS.get(field_name or "", {}).get(preset_name(preset))


def _field_display(si_values, field, preset):
    """(values, label) of an SI column of ``field`` in ``preset``."""
    import numpy as np

    from .units import parse_unit, to_display

    unit = field_unit(field.name, preset) if field is not None else None
    if unit is not None:
        conv = parse_unit(unit, field.dimension)
        return (np.asarray(si_values, dtype=float) - conv.offset) / conv.factor, unit
    return to_display(np.asarray(si_values, dtype=float), field.dimension, preset)


def display_value(si_value: float, dimension: str | None, preset: str = "metric",
                  field=None) -> tuple[float, str]:
    """(value, unit label) of one SI value in the preset's unit."""
    import numpy as np

    from .units import to_display

    if dimension is None:
        return si_value, ""
    if field is not None:
        vals, label = _field_display([si_value], field, preset)
    else:
        vals, label = to_display(np.asarray([si_value], dtype=float), dimension, preset)
    return float(vals[0]), label


def display_frame(df, record_type: str, preset: str = "metric", columns=None):
    """A copy of ``df`` with quantity columns converted to ``preset`` and headers with units."""
    import numpy as np

    from .units import to_display

    fields = fields_for(record_type)
    cols = [c for c in (columns or df.columns) if c in df.columns]
    out = {}
    for c in cols:
        f = fields.get(c)
        if f is not None and f.is_quantity:
            vals, label = _field_display(df[c], f, preset)
            out[f"{c} [{label}]" if label else c] = vals
        else:
            out[c] = df[c].to_numpy()
    import pandas as pd

    return pd.DataFrame(out)


def display_shortlist(shortlist):
    """The shortlist in display units: margins in % (temperature margin in K), temperature in °C, mass in g.

    The margin columns come from the check registry (:mod:`catalog.select.registry`); a margin no
    shortlisted candidate has (NaN throughout, e.g. gearhead margins of direct drives) is left out.
    """
    import numpy as np
    import pandas as pd

    from .select.registry import checks

    out = pd.DataFrame({
        "rank": shortlist["rank"].astype(int),
        "candidate": shortlist["candidate"],
        "worst segment": shortlist["worst_segment"],
    })
    for check in checks():
        margin = check.margin
        if margin is not None and np.isfinite(shortlist[margin.column].to_numpy(dtype=float)).any():
            values = shortlist[margin.column] * (100 if margin.is_fraction else 1)
            out[margin.label or margin.column] = values.round(1)
        for name in check.columns:   # a check's values are shown even where it sets no limit
            if np.isfinite(shortlist[name].to_numpy(dtype=float)).any():
                out[name] = shortlist[name].round(3)
    out["Tw °C"] = (shortlist["winding_temperature"] - 273.15).round(1)
    out["Irms A"] = shortlist["rms_current"].round(3)
    out["mass g"] = (shortlist["mass"] * 1e3).round(0)
    out["price"] = shortlist["price"]
    if "currency" in shortlist:
        currencies = sorted({c for c in shortlist["currency"] if c})
        if len(currencies) == 1:
            out = out.rename(columns={"price": f"price {currencies[0]}"})
        elif currencies:
            out["cur"] = shortlist["currency"]
    if "estimates" in shortlist and (shortlist["estimates"].fillna("") != "").any():
        out["estimated"] = shortlist["estimates"].fillna("")   # totals holding gearing.assumed estimates
    if shortlist["pareto"].any():
        out["pareto"] = shortlist["pareto"].map({True: "yes", False: ""})
    if "available" in shortlist:  # the shelf (catalog.inventory.selection): complete sets on hand, where
        out["in stock"] = shortlist["available"]
        out["location"] = shortlist["location"]
    return out
