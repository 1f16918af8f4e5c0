"""Mapping profiles: a supplier's own column headers -> canonical fields and units.

A profile is a small YAML file validated by ``schemas/mapping.schema.json``; every
field it names must exist in the record type's schema.
"""
from __future__ import annotations

__all__ = ["MappingProfile", "load_mapping"]

import difflib
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError, Problem
from ..fields import fields_for, load_schema
from .readers import yaml_problem


@dataclass(frozen=True)
class MappingProfile:
    name: str
    record_type: str
    columns: dict  # supplier header -> (field, unit or None)
    constants: dict = field(default_factory=dict)  # field -> value for every row
    ignore: tuple = ()
    sheet: str | None = None
    header_row: int = 1
    source: str = ""


def _json_path(path) -> str:
    return "/".join(str(p) for p in path) or "(top)"


def load_mapping(path) -> MappingProfile:
    """Read and check a mapping profile; every problem is one :class:`Problem`."""
    import jsonschema
    import yaml

    from .yamlsafe import load_profile

    path = Path(path)
    source = str(path)
    if not path.is_file():
        raise InputError(f"{source}: no such mapping profile", [Problem(source, None, None, "no such mapping profile")])
    try:
        doc = load_profile(path.read_text(encoding="utf-8-sig"))
    except UnicodeDecodeError as exc:
        msg = (f"byte 0x{exc.object[exc.start]:02x} is not UTF-8, expected UTF-8 text "
               "(a Latin-1 or Windows-1252 file? save it as UTF-8)")
        line = exc.object[: exc.start].count(b"\n") + 1
        raise InputError(f"{source}: {msg}", [Problem(source, line, None, msg)]) from None
    except yaml.YAMLError as exc:
        problem, line = yaml_problem(exc)
        msg = f"not a valid YAML mapping profile ({problem})"
        raise InputError(f"{source}: {msg}", [Problem(source, line, None, msg)]) from None
    except RecursionError:
        msg = "not a valid YAML mapping profile (nested too deeply)"
        raise InputError(f"{source}: {msg}", [Problem(source, None, None, msg)]) from None
    validator = jsonschema.Draft202012Validator(load_schema("mapping"))
    problems = []
    for err in sorted(validator.iter_errors(doc), key=lambda e: list(e.absolute_path)):
        problems.append(Problem(source, None, _json_path(err.absolute_path), err.message))
    if problems:
        raise InputError(f"{source}: invalid mapping profile", problems)
    rtype = doc["record_type"]
    known = fields_for(rtype)
    columns = {}
    for header, spec in doc["columns"].items():
        fname = spec["field"]
        if fname not in known:
            close = difflib.get_close_matches(fname, list(known), n=3)
            hint = f" (did you mean {', '.join(close)}?)" if close else ""
            problems.append(Problem(source, None, f"columns/{header}/field",
                                    f"{fname!r} is not a {rtype} field{hint}"))
            continue
        columns[str(header)] = (fname, spec.get("unit"))  # a header such as 2024 is text in the file
    constants = dict(doc.get("constants") or {})
    for fname in constants:
        if fname not in known:
            close = difflib.get_close_matches(fname, list(known), n=3)
            hint = f" (did you mean {', '.join(close)}?)" if close else ""
            problems.append(Problem(source, None, f"constants/{fname}", f"{fname!r} is not a {rtype} field{hint}"))
    targets = [f for f, _ in columns.values()] + list(constants)
    for fname in sorted({f for f in targets if targets.count(f) > 1}):
        problems.append(Problem(source, None, fname, f"field {fname!r} is mapped more than once, expected once"))
    if problems:
        raise InputError(f"{source}: invalid mapping profile", problems)
    return MappingProfile(
        name=doc["profile"], record_type=rtype, columns=columns, constants=constants,
        ignore=tuple(str(h) for h in doc.get("ignore") or ()), sheet=doc.get("sheet"),
        header_row=int(doc.get("header_row", 1)), source=source,
    )
