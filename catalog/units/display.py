"""SI values -> display units (``si``, ``datasheet`` or ``imperial`` preset).

The labels come from the ``display`` table of :mod:`catalog.units.dimensions`; each
is a spelling that :func:`~catalog.units.parse_unit` reads, so the factor and
offset are the very ones used on import (cached).
"""
from __future__ import annotations

__all__ = ["display_unit", "to_display"]

from functools import lru_cache

from .dimensions import PRESETS, get_dimension
from .spelling import Conversion, parse_unit


def _labels(dimension, preset: str) -> tuple[str, ...]:
    if preset not in PRESETS:
        raise KeyError(f"unknown display preset {preset!r}, expected one of {', '.join(PRESETS)}")
    return get_dimension(dimension).display[preset]


@lru_cache(maxsize=None)
def _conversion(dimension: str, label: str) -> Conversion:
    return parse_unit(label, dimension)


def display_unit(dimension, preset: str = "datasheet") -> str:
    """The unit label [text] a ``preset`` shows ``dimension`` in, e.g. ``'mN·m'``."""
    return _labels(dimension, preset)[0]


def to_display(si_values, dimension, preset: str = "datasheet"):
    """``(values ndarray, unit label)``: ``si_values`` [SI] in the preset's unit.

    Where a preset lists several labels (largest unit first, e.g. ``s`` then ``ms``)
    the first one in which the largest finite magnitude is at least 1 is used
    ("as fits"), else the last; NaN stays NaN.
    """
    import numpy as np

    name = get_dimension(dimension).name
    si = np.asarray(si_values, dtype=float)
    labels = _labels(name, preset)
    finite = np.abs(si[np.isfinite(si)])
    chosen = labels[0]
    if len(labels) > 1 and finite.size and finite.max() > 0:
        chosen = labels[-1]
        for label in labels:
            conv = _conversion(name, label)
            if finite.max() / abs(conv.factor) >= 1:
                chosen = label
                break
    conv = _conversion(name, chosen)
    return (si - conv.offset) / conv.factor, chosen
