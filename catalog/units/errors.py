"""Errors of the unit spelling layer.

Every error raised by :mod:`catalog.units` is a :class:`UnitError`, which is both a
:class:`catalog.errors.MotorshelfError` and a :class:`ValueError`.  The message says
what was found and what was expected; the parts are kept as attributes:

``text``      the cell or spelling as written (``'12 N*m'``)
``unit``      the unit spelling alone (``'N*m'``), for "unknown unit" messages
``kind``      ``unknown``, ``dimension``, ``ambiguous``, ``missing``, ``syntax``, ``number``
              or ``date`` (a date where a number belongs)
``found``     what the text reads as (``'a torque'``), if anything
``expected``  what the field wants (``'a speed'`` or ``'a speed such as rpm or rad/s'``)
``hint``      how to fix it, or None
"""
from __future__ import annotations

__all__ = ["UnitError", "NumberError"]

from ..errors import MotorshelfError


def _rebuild(cls, kwargs):
    return cls(**kwargs)


def _quoted(text) -> str:
    """``text`` in quotes for a message; a long one as its start and end and its length (a cell of
    thousands of digits stays one readable line)."""
    text = str(text)
    if len(text) <= 80:
        return f"'{text}'"
    return f"'{text[:32]}…{text[-16:]}' ({len(text)} characters)"


class UnitError(MotorshelfError, ValueError):
    """A unit spelling (or a cell) cannot be read as the expected dimension."""

    def __init__(self, text: str, *, kind: str, expected: str | None = None,
                 found: str | None = None, hint: str | None = None, unit: str | None = None):
        self.text = text
        self.unit = text if unit is None else unit
        self.kind = kind
        self.expected = expected
        self.found = found
        self.hint = hint
        super().__init__(self._render(), text=text, unit=self.unit, kind=kind,
                         expected=expected, found=found, hint=hint)

    def _kwargs(self) -> dict:
        return dict(text=self.text, kind=self.kind, expected=self.expected,
                    found=self.found, hint=self.hint, unit=self.unit)

    def _render(self) -> str:
        k = self.kind
        if k == "unknown":
            msg = f"unknown unit {_quoted(self.unit)}, expected {self.expected}"
        elif k == "dimension":
            msg = f"{_quoted(self.text)} is {self.found}, expected {self.expected}"
        elif k == "ambiguous":
            msg = f"{_quoted(self.text)} is ambiguous ({self.found}), expected {self.expected}"
        elif k == "missing":
            msg = f"no unit given, expected {self.expected}"
        elif k == "syntax":
            msg = f"cannot read unit {_quoted(self.unit)} ({self.found}), expected {self.expected}"
        elif k == "date":
            msg = f"'{self.text}' is a date, expected {self.expected}"
        else:  # number
            msg = f"{self.found} in {_quoted(self.text)}"
        return f"{msg}: {self.hint}" if self.hint else msg

    def with_text(self, text: str) -> "UnitError":
        """The same error, reported for the whole cell ``text`` (e.g. ``'12 N*m'``)."""
        kw = self._kwargs()
        kw["text"] = text
        return type(self)(**kw)

    def __reduce__(self):
        return (_rebuild, (type(self), self._kwargs()))


class NumberError(UnitError):
    """A cell's number is malformed (decimal comma, thousands separator, nan ...)."""

    def __init__(self, text: str, *, found: str, hint: str | None = None, **kw):
        kw.pop("kind", None)
        super().__init__(text, kind="number", found=found, hint=hint, **kw)
