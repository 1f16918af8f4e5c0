"""Input and output handling shared by every public physics function (the ``@vectorised`` wrapper).

Physics functions accept Python scalars, numpy arrays and pandas Series and
broadcast them with numpy rules.  This module converts inputs to numpy before
a function runs and restores the caller's container afterwards:

* every input that is a Series (anything with ``index`` and ``to_numpy``) is
  used positionally as its numpy values (no index alignment);
* integer inputs become floats;
* a 0-d result becomes a Python ``float`` (or ``bool``);
* an array result whose shape equals the shape of the first Series argument is
  wrapped back into that Series' type with its index;
* division by zero, overflow and invalid operations give inf/NaN without
  warnings, so a catalogue row with missing data (NaN) yields NaN, not noise.

pandas is never imported: Series are recognised by duck typing.
"""

from __future__ import annotations

import functools
from typing import Any, Callable

import numpy as np

__all__ = ["vectorised"]


def _is_series(value: Any) -> bool:
    return (
        hasattr(value, "index")
        and hasattr(value, "to_numpy")
        and getattr(value, "ndim", None) == 1
    )


def _to_numpy(value: Any) -> Any:
    if _is_series(value):
        value = value.to_numpy()
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return float(value)
    if isinstance(value, (list, tuple)):
        value = np.asarray(value)
    if isinstance(value, np.ndarray) and value.dtype.kind in "iu":
        return value.astype(float)
    return value


def _finish(result: Any, template: Any) -> Any:
    if isinstance(result, tuple):
        items = [_finish(item, template) for item in result]
        if hasattr(result, "_fields"):
            return type(result)(*items)
        return tuple(items)
    if isinstance(result, (np.ndarray, np.generic)):
        if result.ndim == 0:
            return result.item()
        if template is not None and result.shape == template.shape:
            return type(template)(result, index=template.index)
    return result


def vectorised(function: Callable) -> Callable:
    """Wrap a physics function with the conversions described in the module."""

    @functools.wraps(function)
    def wrapper(*args, **kwargs):
        template = next(
            (a for a in (*args, *kwargs.values()) if _is_series(a)), None
        )
        args = [_to_numpy(a) for a in args]
        kwargs = {key: _to_numpy(value) for key, value in kwargs.items()}
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            result = function(*args, **kwargs)
        return _finish(result, template)

    return wrapper
