"""Field descriptions built once from the JSON Schema files in ``schemas/``.

The schema files are the one source of truth for the canonical field names, their
types, physical dimensions (``x-dimension``), bounds, enums and required fields.
Every layer (import, validation, store views, display) uses these descriptions, so
a new field is one schema edit.
"""
from __future__ import annotations

__all__ = [
    "Field",
    "RECORD_TYPES",
    "schema_dir",
    "load_schema",
    "fields_for",
    "field_names",
    "numeric_fields",
    "schema_version",
    "list_separators",
    "split_list",
]

import json
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

RECORD_TYPES = ("motor", "gearhead")
_SCHEMA_FILES = {"motor": "motor.schema.json", "gearhead": "gearhead.schema.json",
                 "mapping": "mapping.schema.json", "envelope": "envelope.schema.json",
                 "stock": "stock.schema.json"}


def schema_dir() -> Path:
    """Folder holding the JSON Schema files (``schemas/`` at the project top)."""
    here = Path(__file__).resolve().parent
    for candidate in (here.parent / "schemas", here / "schemas"):
        if (candidate / "motor.schema.json").is_file():
            return candidate
    raise FileNotFoundError(f"schemas/ not found beside {here}")


@lru_cache(maxsize=None)
def load_schema(name: str) -> dict:
    """The parsed JSON Schema ``name`` (motor, gearhead, mapping, envelope, stock)."""
    return json.loads((schema_dir() / _SCHEMA_FILES[name]).read_text(encoding="utf-8"))


@dataclass(frozen=True)
class Field:
    """One canonical field of a record type, as its schema states it."""

    name: str
    record_type: str
    kind: str  # "number", "integer" or "string"
    dimension: str | None  # physical dimension for quantities, else None
    description: str
    required: bool = False
    minimum: float | None = None
    exclusive_minimum: float | None = None
    maximum: float | None = None
    enum: tuple[str, ...] | None = None
    pattern: str | None = None
    max_length: int | None = None
    min_length: int | None = None
    symbol: str | None = None  # the formula symbol (``x-symbol``), e.g. "Kt"
    synonyms: tuple = ()  # (spelling, enum value) of ``x-synonyms``: other words datasheets print

    def canonical_texts(self, values) -> list:
        """``values`` with every spelling of an enum value replaced by the value itself.

        A text is read as an enum value when it equals the value or one of its
        ``x-synonyms`` ignoring case, surrounding space, and whether words are joined by
        spaces, hyphens or underscores (``NdFeB``, ``Iron Core``, ``line_to_line_RMS``).
        Any other text is returned unchanged, for validation to refuse.
        """
        if self.enum is None:
            return list(values)
        table = _spellings(self.enum, self.synonyms)
        seen: dict = {}
        out = []
        for v in values:
            if isinstance(v, str):
                if v not in seen:
                    seen[v] = table.get(_spelling_key(v), v)
                v = seen[v]
            out.append(v)
        return out
    separator: str | None = None  # a list of codes in one text, e.g. "F22; F28" (``x-list-separator``)
    pattern_words: str | None = None  # the pattern said for people (``x-pattern-words``)

    @property
    def is_numeric(self) -> bool:
        return self.kind in ("number", "integer")

    @property
    def is_quantity(self) -> bool:
        """A numeric field with a physical dimension (its cells carry units)."""
        return self.is_numeric and self.dimension is not None

    @property
    def si_unit(self) -> str | None:
        """The SI unit the description states in brackets (``"N·m/A"``), or None."""
        import re

        found = re.findall(r"\[([^\[\]]+)\]", self.description)
        return found[-1] if found else None


def _spelling_key(text: str) -> str:
    """Lower case, words joined by one hyphen: the key a spelling of an enum value is read by."""
    import re

    return re.sub(r"[\s_\-]+", "-", text.strip().lower())


@lru_cache(maxsize=None)
def _spellings(enum: tuple, synonyms: tuple) -> dict:
    table = {_spelling_key(value): value for value in enum}
    for spelling, value in synonyms:
        key = _spelling_key(spelling)
        if table.get(key, value) != value:
            raise ValueError(f"spelling {spelling!r} means both {table[key]!r} and {value!r}")
        table[key] = value
    return table


@lru_cache(maxsize=None)
def fields_for(record_type: str) -> dict[str, Field]:
    """Ordered mapping name -> :class:`Field` for ``motor`` or ``gearhead``."""
    if record_type not in RECORD_TYPES:
        raise ValueError(f"unknown record type {record_type!r}, expected one of {RECORD_TYPES}")
    schema = load_schema(record_type)
    required = set(schema.get("required", ()))
    out: dict[str, Field] = {}
    for name, spec in schema["properties"].items():
        enum = spec.get("enum")
        out[name] = Field(
            name=name,
            record_type=record_type,
            kind=spec.get("type", "string"),
            dimension=spec.get("x-dimension"),
            description=spec.get("description", ""),
            required=name in required,
            minimum=spec.get("minimum"),
            exclusive_minimum=spec.get("exclusiveMinimum"),
            maximum=spec.get("maximum"),
            enum=tuple(enum) if enum else None,
            pattern=spec.get("pattern"),
            max_length=spec.get("maxLength"),
            min_length=spec.get("minLength"),
            symbol=spec.get("x-symbol"),
            synonyms=tuple((spelling, value) for value, spellings in spec.get("x-synonyms", {}).items()
                           for spelling in spellings),
            separator=spec.get("x-list-separator"),
            pattern_words=spec.get("x-pattern-words"),
        )
    return out


def list_separators() -> dict[str, str]:
    """Field name → separator of the text fields that hold a list (any record type)."""
    return {f.name: f.separator for rt in RECORD_TYPES for f in fields_for(rt).values() if f.separator}


def split_list(text, separator: str = ";") -> list[str]:
    """The codes of a list field's text: ``'F22; F28'`` → ``['F22', 'F28']`` (empty parts dropped)."""
    if not isinstance(text, str):
        return []
    return [part.strip() for part in text.split(separator) if part.strip()]


def field_names(record_type: str) -> list[str]:
    return list(fields_for(record_type))


def numeric_fields(record_type: str) -> list[str]:
    return [f.name for f in fields_for(record_type).values() if f.is_numeric]


def schema_version(record_type: str) -> int:
    return int(load_schema(record_type).get("x-version", 1))
