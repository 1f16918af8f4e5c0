"""SI values -> display units (``si``, ``metric`` or ``imperial`` preset).

The labels come from the ``display`` table of :mod:`catalog.units.dimensions`; each
is a spelling that :func:`~catalog.units.parse_unit` reads, so the factor and
offset are the very ones used on import (cached).

A preset lists its habitual unit first (mN·m, g·cm², s ...) and the units it may
switch to by magnitude: :func:`choose_label` keeps the habitual unit while the
largest magnitude of a column reads between 0.1 and 10 000 in it, and otherwise
takes the listed unit in which it reads closest to 1 … 10 000 (400 N·m, not
400 000 mN·m; 347 kg·cm², not 3 470 000 g·cm²).
"""
from __future__ import annotations

__all__ = ["display_unit", "to_display", "preset_name", "choose_label", "HABIT_BAND", "FIT_BAND"]

import math
from functools import lru_cache

from .dimensions import PRESET_ALIASES, PRESETS, get_dimension
from .spelling import Conversion, parse_unit

#: Magnitudes the habitual unit of a preset keeps (largest value of a column).
HABIT_BAND = (0.1, 1e4)
#: Magnitudes another unit of the preset is chosen for.
FIT_BAND = (1.0, 1e4)


def preset_name(preset: str) -> str:
    """The preset ``preset`` means (``'datasheet'`` → ``'metric'``); unknown → KeyError."""
    name = PRESET_ALIASES.get(preset, preset)
    if name not in PRESETS:
        raise KeyError(f"unknown display preset {preset!r}, expected one of {', '.join(PRESETS)}")
    return name


def _labels(dimension, preset: str) -> tuple[str, ...]:
    return get_dimension(dimension).display[preset_name(preset)]


@lru_cache(maxsize=None)
def _conversion(dimension: str, label: str) -> Conversion:
    return parse_unit(label, dimension)


def display_unit(dimension, preset: str = "metric") -> str:
    """The habitual unit label [text] a ``preset`` shows ``dimension`` in, e.g. ``'mN·m'``."""
    return _labels(dimension, preset)[0]


def _decades_outside(m: float, band: tuple[float, float]) -> float:
    lo, hi = band
    if m < lo:
        return math.log10(lo / m)
    if m >= hi:
        return math.log10(m / hi) + 1e-9
    return 0.0


def choose_label(largest: float, dimension, preset: str = "metric") -> str:
    """The unit label of ``preset`` for a column whose largest magnitude is ``largest`` [SI].

    The habitual (first) label while ``largest`` reads within :data:`HABIT_BAND` in it,
    else the label in which it reads nearest :data:`FIT_BAND` (the earlier label on a tie).
    Offsets (°C, °F) are not magnitudes: a temperature preset has one label.
    """
    name = get_dimension(dimension).name
    labels = _labels(name, preset)
    if len(labels) == 1 or not (largest > 0 and math.isfinite(largest)):
        return labels[0]
    first = largest / abs(_conversion(name, labels[0]).factor)
    if _decades_outside(first, HABIT_BAND) == 0.0:
        return labels[0]
    scores = [(_decades_outside(largest / abs(_conversion(name, lab).factor), FIT_BAND), k)
              for k, lab in enumerate(labels)]
    return labels[min(scores)[1]]


def to_display(si_values, dimension, preset: str = "metric"):
    """``(values ndarray, unit label)``: ``si_values`` [SI] in the preset's unit.

    One unit for all the values, chosen by :func:`choose_label` from the largest
    finite magnitude; NaN stays NaN.
    """
    import numpy as np

    name = get_dimension(dimension).name
    si = np.asarray(si_values, dtype=float)
    finite = np.abs(si[np.isfinite(si)])
    chosen = choose_label(float(finite.max()) if finite.size else 0.0, name, preset)
    conv = _conversion(name, chosen)
    return (si - conv.offset) / conv.factor, chosen
