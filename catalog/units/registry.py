"""THE pint registry of the program, created once, lazily.

Nothing else in motorshelf creates a :class:`pint.UnitRegistry`; pint is imported
only when :func:`get_registry` is first called, so importing :mod:`catalog.units`
stays cheap (``motorshelf --help`` must not pay for pint).
"""
from __future__ import annotations

__all__ = ["get_registry", "quantity"]

import threading
from functools import lru_cache

_lock = threading.Lock()
_registry = None


def get_registry():
    """The one :class:`pint.UnitRegistry` (created on first call, thread-safe)."""
    global _registry
    if _registry is None:
        with _lock:
            if _registry is None:
                import pint

                ureg = pint.UnitRegistry()
                pint.set_application_registry(ureg)
                _registry = ureg
    return _registry


@lru_cache(maxsize=None)
def quantity(expression: str):
    """``expression`` (pint syntax, e.g. ``'revolution / minute'``) as a Quantity, cached."""
    return get_registry().parse_expression(expression)
