"""Readers: a supplier file in, tables of raw cells out.

Each reader returns :class:`RawTable` objects holding the headers, the cells as
written (text, numbers, or ``{value, unit}`` mappings from JSON/YAML) and the row
number of every record in its source, so every later problem can be reported as
``file:row:field``.  Readers never interpret units.
"""
from __future__ import annotations

__all__ = ["RawTable", "read_file", "SUPPORTED_SUFFIXES", "MAX_FILE_BYTES"]

import csv
import io
import json
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError, Problem

SUPPORTED_SUFFIXES = (".csv", ".xlsx", ".json", ".yaml", ".yml")
#: Files larger than this are refused before reading (bounded memory).
MAX_FILE_BYTES = 200 * 1024 * 1024

_TYPE_KEYS = {"motors": "motor", "gearheads": "gearhead", "motor": "motor", "gearhead": "gearhead"}


@dataclass
class RawTable:
    """Cells of one table of a source file, before any interpretation."""

    source: str  # file name as shown in messages
    headers: list[str]
    rows: list[list]  # one list of cells per record, aligned with headers
    row_numbers: list[int]  # 1-based row (CSV/XLSX line, JSON/YAML record number)
    header_row: int = 1  # row number shown for header problems
    record_type: str | None = None  # when the file says it (sheet name, top-level key)
    units: dict = field(default_factory=dict)  # header -> default unit stated by the file


def _fail(source: str, message: str, row: int | None = None) -> InputError:
    return InputError(f"{source}: {message}", [Problem(source, row, None, message)])


def _decode(data: bytes, source: str) -> str:
    if b"\x00" in data[:8192]:
        raise _fail(source, "binary data (NUL bytes), expected a UTF-8 text file")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise _fail(source, f"byte 0x{data[exc.start]:02x} is not UTF-8, expected UTF-8 text "
                            "(save the file as UTF-8)", row=line) from None


def _read_csv(path: Path, source: str, header_row: int = 1) -> list[RawTable]:
    text = _decode(path.read_bytes(), source)
    sample = text[:4096]
    delimiter = ","
    first = sample.splitlines()[header_row - 1] if sample.splitlines()[header_row - 1:] else ""
    if first.count(";") > first.count(",") and first.count(";") > 0:
        delimiter = ";"
    elif first.count("\t") > first.count(","):
        delimiter = "\t"
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    headers: list[str] | None = None
    rows, numbers = [], []
    try:
        for lineno, cells in enumerate(reader, start=1):
            if lineno < header_row:
                continue
            if headers is None:
                headers = [c.strip() for c in cells]
                continue
            if not any(c.strip() for c in cells):
                continue
            rows.append(cells)
            numbers.append(reader.line_num)
    except csv.Error as exc:
        raise _fail(source, f"not valid CSV ({exc})", row=reader.line_num) from None
    if not headers or not any(headers):
        raise _fail(source, "no header row, expected column names in the first row")
    return [RawTable(source, headers, rows, numbers, header_row=header_row)]


def _read_xlsx(path: Path, source: str, sheet: str | None, header_row: int = 1) -> list[RawTable]:
    import zipfile

    import openpyxl

    try:
        wb = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except (zipfile.BadZipFile, KeyError, OSError, ValueError) as exc:
        raise _fail(source, f"not a readable .xlsx workbook ({type(exc).__name__}: {exc})") from None
    try:
        names = wb.sheetnames
        if sheet is not None:
            if sheet not in names:
                raise _fail(source, f"no sheet {sheet!r}, expected one of {', '.join(names)}")
            chosen = [(sheet, None)]
        else:
            typed = [(n, _TYPE_KEYS[n.strip().lower()]) for n in names if n.strip().lower() in _TYPE_KEYS]
            chosen = typed or [(names[0], None)]
        tables = []
        for name, rtype in chosen:
            ws = wb[name]
            headers = None
            rows, numbers = [], []
            for lineno, values in enumerate(ws.iter_rows(values_only=True), start=1):
                if lineno < header_row:
                    continue
                if headers is None:
                    headers = ["" if v is None else str(v).strip() for v in values]
                    continue
                if all(v is None or (isinstance(v, str) and not v.strip()) for v in values):
                    continue
                rows.append(list(values))
                numbers.append(lineno)
            if not headers or not any(headers):
                raise _fail(f"{source}[{name}]", "no header row, expected column names in the first row")
            while headers and headers[-1] == "":
                headers.pop()
            rows = [r[: len(headers)] + [None] * (len(headers) - len(r)) for r in rows]
            label = source if len(chosen) == 1 and sheet is None and rtype is None else f"{source}[{name}]"
            tables.append(RawTable(label, headers, rows, numbers, header_row=header_row, record_type=rtype))
        return tables
    finally:
        wb.close()


def _records_to_tables(doc, source: str) -> list[RawTable]:
    """JSON/YAML: a list of records, or {motors: [...], gearheads: [...], units: {...}}."""
    groups: list[tuple[str | None, list, dict]] = []
    if isinstance(doc, list):
        groups.append((None, doc, {}))
    elif isinstance(doc, dict):
        units = doc.get("units") or {}
        if not isinstance(units, dict):
            raise _fail(source, "'units' must map field names to units")
        unknown = [k for k in doc if k not in _TYPE_KEYS and k not in ("units", "description", "source")]
        if unknown:
            raise _fail(source, f"unknown top-level key {unknown[0]!r}, expected motors, gearheads or units")
        for key, value in doc.items():
            if key in _TYPE_KEYS:
                if not isinstance(value, list):
                    raise _fail(source, f"'{key}' must be a list of records")
                groups.append((_TYPE_KEYS[key], value, units))
        if not groups:
            raise _fail(source, "no records, expected a list under 'motors' or 'gearheads'")
    else:
        raise _fail(source, "expected a list of records or a mapping with 'motors'/'gearheads'")
    tables = []
    for rtype, records, units in groups:
        headers: list[str] = []
        seen = set()
        for i, rec in enumerate(records, start=1):
            if not isinstance(rec, dict):
                raise _fail(source, f"record {i} is a {type(rec).__name__}, expected a mapping of field: value", row=i)
            for k in rec:
                if str(k) not in seen:
                    seen.add(str(k))
                    headers.append(str(k))
        rows = [[rec.get(h) for h in headers] for rec in records]
        label = source if len(groups) == 1 else f"{source}[{'motors' if rtype == 'motor' else 'gearheads'}]"
        tables.append(RawTable(label, headers, rows, list(range(1, len(records) + 1)),
                               header_row=None, record_type=rtype, units={str(k): str(v) for k, v in units.items()}))
    return tables


def _read_json(path: Path, source: str) -> list[RawTable]:
    text = _decode(path.read_bytes(), source)
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise _fail(source, f"not valid JSON ({exc.msg} at column {exc.colno})", row=exc.lineno) from None
    return _records_to_tables(doc, source)


def _read_yaml(path: Path, source: str) -> list[RawTable]:
    import yaml

    text = _decode(path.read_bytes(), source)
    try:
        doc = yaml.safe_load(text)  # safe loading only: no object construction
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        row = mark.line + 1 if mark is not None else None
        problem = getattr(exc, "problem", None) or str(exc).splitlines()[0]
        raise _fail(source, f"not valid YAML ({problem})", row=row) from None
    except RecursionError:
        raise _fail(source, "YAML nested too deeply") from None
    return _records_to_tables(doc, source)


def read_file(path, sheet: str | None = None, header_row: int = 1) -> list[RawTable]:
    """Read ``path`` (CSV, XLSX, JSON or YAML) into raw tables.

    Raises :class:`~catalog.errors.InputError` for an unreadable file.
    """
    path = Path(path)
    source = str(path)
    if not path.is_file():
        raise _fail(source, "no such file")
    suffix = path.suffix.lower()
    if suffix not in SUPPORTED_SUFFIXES:
        raise _fail(source, f"unsupported file type {suffix or '(none)'!r}, expected one of {', '.join(SUPPORTED_SUFFIXES)}")
    size = path.stat().st_size
    if size > MAX_FILE_BYTES:
        raise _fail(source, f"file of {size / 1e6:.0f} MB, expected at most {MAX_FILE_BYTES / 1e6:.0f} MB; split it")
    if size == 0:
        raise _fail(source, "empty file, expected a header row and records")
    if suffix == ".csv":
        return _read_csv(path, source, header_row)
    if suffix == ".xlsx":
        return _read_xlsx(path, source, sheet, header_row)
    if suffix == ".json":
        return _read_json(path, source)
    return _read_yaml(path, source)
