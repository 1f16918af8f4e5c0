"""The project's error hierarchy.

Every error a user can cause is a :class:`MotorshelfError` (also a subclass of the
fitting builtin), carries its details as attributes, and renders as one line that
says what was found and what was expected.  The CLI prints ``error: <message>``
per problem and exits with code 2.
"""
from __future__ import annotations

__all__ = [
    "MotorshelfError",
    "InputError",
    "ImportRejected",
    "StoreError",
    "StoreBusy",
    "StoreDamaged",
    "NotFound",
    "Problem",
]

from dataclasses import dataclass


class MotorshelfError(Exception):
    """Base class of every error motorshelf raises on purpose."""

    exit_code = 2

    def __init__(self, message: str, **details):
        super().__init__(message)
        self.message = message
        for key, value in details.items():
            setattr(self, key, value)

    def __str__(self) -> str:  # pragma: no cover - trivial
        return self.message


@dataclass(frozen=True)
class Problem:
    """One problem in an input file: ``file:row:field: message``.

    ``row`` is the 1-based line/row of the source (the header is row 1 in CSV and
    XLSX files; records in JSON/YAML are numbered from 1); ``None`` for problems of
    the whole file.
    """

    file: str
    row: int | None
    field: str | None
    message: str

    def __str__(self) -> str:
        parts = [self.file]
        if self.row is not None:
            parts.append(str(self.row))
        if self.field:
            parts.append(self.field)
        return ":".join(parts) + ": " + self.message


class InputError(MotorshelfError, ValueError):
    """An input file or argument is wrong; ``problems`` lists every problem."""

    def __init__(self, message: str, problems: list[Problem] | None = None, **details):
        super().__init__(message, problems=list(problems or []), **details)


class ImportRejected(InputError):
    """A file was rejected whole; nothing of it was stored."""


class StoreError(MotorshelfError, RuntimeError):
    """The catalogue file cannot be opened, migrated or written."""


class StoreBusy(StoreError):
    """Another process holds the catalogue's write lock for longer than we wait."""


class StoreDamaged(StoreError):
    """The catalogue file is cut short or its blocks do not read back (exit code 3: restore it
    from a backup)."""

    exit_code = 3


class NotFound(MotorshelfError, LookupError):
    """An identifier names no record; ``suggestions`` holds close matches."""

    def __init__(self, message: str, suggestions: list[str] | None = None, **details):
        super().__init__(message, suggestions=list(suggestions or []), **details)
