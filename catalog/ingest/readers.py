"""Readers: a supplier file in, tables of raw cells out.

Each reader returns :class:`RawTable` objects holding the headers, the cells as
written (text, numbers, or ``{value, unit}`` mappings from JSON/YAML) and the row
number of every record in its source, so every later problem can be reported as
``file:row:field``.  Readers never interpret units.
"""
from __future__ import annotations

__all__ = ["RawTable", "read_file", "SUPPORTED_SUFFIXES", "MAX_FILE_BYTES", "MAX_YAML_BYTES",
           "MAX_XLSX_UNPACKED_BYTES", "MAX_CELLS"]

import codecs
import csv
import datetime as _dt
import io
import json
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError, Problem
from ..units.values import WHITESPACE_RE2

SUPPORTED_SUFFIXES = (".csv", ".xlsx", ".json", ".yaml", ".yml")
#: Files larger than this are refused before reading.  An import holds the whole file,
#: its SI columns and what it writes in memory (one transaction, every row checked
#: before anything is written; DuckDB keeps a transaction's rows until COMMIT):
#: measured peaks are 0.6 GB for 20k motors (4 MB CSV, 17 columns) and 1.8 GB for
#: 100k motors (20 MB), about 1 kB per cell.  Files bigger than that are split.
MAX_FILE_BYTES = 24 * 1024 * 1024
#: Cells (rows x columns) one file may hold, so a file of tiny cells is bounded too.
MAX_CELLS = 2_000_000
#: YAML is parsed in pure Python, node by node: about 20x the memory of CSV per byte.
MAX_YAML_BYTES = 4 * 1024 * 1024
#: An .xlsx is a zip archive: its unpacked size is what the reader has to parse.
MAX_XLSX_UNPACKED_BYTES = 8 * MAX_FILE_BYTES

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
    problems: list = field(default_factory=list)  # Problem of single rows/cells found while reading
    columns: list | None = None  # the cells per header position as pyarrow string arrays, when read so


class ColumnRows(Sequence):
    """The rows of a table read column by column (pyarrow string arrays), made on demand."""

    def __init__(self, columns: list, n: int):
        self._columns = columns
        self._n = n

    def __len__(self) -> int:
        return self._n

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[k] for k in range(*i.indices(self._n))]
        if i < 0:
            i += self._n
        if not 0 <= i < self._n:
            raise IndexError("row index out of range")
        return [col[i].as_py() for col in self._columns]

    def __iter__(self):
        return (list(cells) for cells in zip(*(col.to_pylist() for col in self._columns)))


def _fail(source: str, message: str, row: int | None = None, field: str | None = None) -> InputError:
    return InputError(f"{source}: {message}", [Problem(source, row, field, message)])


def _too_many_cells(source: str, row: int | None) -> InputError:
    return _fail(source, f"more than {MAX_CELLS} cells, expected at most {MAX_CELLS} "
                         "(rows x columns) in one file; split it", row=row)


def _header_missing(source: str, header_row: int) -> InputError:
    where = "the first row" if header_row == 1 else f"row {header_row}"
    return _fail(source, f"no header row, expected column names in {where}")


def _decode(data: bytes, source: str) -> str:
    nul = data.find(b"\x00")
    if nul >= 0:
        raise _fail(source, "binary data (a NUL byte), expected a UTF-8 text file",
                    row=data[:nul].count(b"\n") + 1)
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise _fail(source, f"byte 0x{data[exc.start]:02x} is not UTF-8, expected UTF-8 text "
                            "(a Latin-1 or Windows-1252 file? save it as UTF-8)", row=line) from None


def _read_csv_columns(data: bytes, text: str, source: str, delimiter: str) -> RawTable | None:
    """A plain CSV file read column by column with pyarrow; None for anything else.

    Plain: no quote character, no line break but ``\\n`` and ``\\r\\n``, no empty line
    before the last record, every record with one cell per header and one cell not
    blank, at most :data:`MAX_CELLS` cells, no cell longer than :mod:`csv` takes
    (``csv.field_size_limit()``).  Such a file is split at line breaks and
    delimiters only, so pyarrow reads exactly the cells and rows :mod:`csv` reads
    (record *k* on line *k* + 1); any other file is left to the :mod:`csv` reader,
    which also says what is wrong with it.
    """
    if '"' in text or text.count("\r") != text.count("\r\n"):
        return None
    body = text.rstrip("\r\n")
    if not body or "\n\n" in body or "\n\r\n" in body:
        return None
    cells = body.split("\n", 1)[0].removesuffix("\r").split(delimiter)
    headers = [c.strip() for c in cells]
    n = body.count("\n")  # records: one per line after the header
    limit = csv.field_size_limit()
    if not any(headers) or (n + 1) * len(headers) > MAX_CELLS or max(map(len, cells)) >= limit:
        return None
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pcsv

    names = [f"c{k}" for k in range(len(headers))]
    try:
        table = pcsv.read_csv(
            io.BytesIO(data.removeprefix(codecs.BOM_UTF8)),
            read_options=pcsv.ReadOptions(column_names=names, skip_rows=1),
            parse_options=pcsv.ParseOptions(delimiter=delimiter, quote_char=False, double_quote=False,
                                            escape_char=False, newlines_in_values=False, ignore_empty_lines=True),
            convert_options=pcsv.ConvertOptions(column_types={c: pa.string() for c in names},
                                                strings_can_be_null=False, quoted_strings_can_be_null=False))
    except pa.ArrowException:  # a record with another number of cells
        return None
    if table.num_rows != n:
        return None
    columns = [table.column(c).combine_chunks() for c in names]
    if max(pc.max(pc.utf8_length(col)).as_py() or 0 for col in columns) >= limit:
        return None
    blank = pc.match_substring_regex(columns[0], f"^[{WHITESPACE_RE2}]*$")
    for col in columns[1:]:
        if not pc.any(blank).as_py():
            break
        blank = pc.and_(blank, pc.match_substring_regex(col, f"^[{WHITESPACE_RE2}]*$"))
    if pc.any(blank).as_py():  # a record of blank cells only: csv's reader skips it
        return None
    return RawTable(source, headers, ColumnRows(columns, n), list(range(2, n + 2)), columns=columns)


def _read_csv(path: Path, source: str, header_row: int = 1) -> list[RawTable]:
    data = path.read_bytes()
    text = _decode(data, source)
    sample = text[:4096]
    delimiter = ","
    first = sample.splitlines()[header_row - 1] if sample.splitlines()[header_row - 1:] else ""
    if first.count(";") > first.count(",") and first.count(";") > 0:
        delimiter = ";"
    elif first.count("\t") > first.count(","):
        delimiter = "\t"
    if header_row == 1:
        table = _read_csv_columns(data, text, source, delimiter)
        if table is not None:
            return [table]
    # strict: a quote that is never closed is an error, not a cell swallowing the rest of the file
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True)
    headers: list[str] | None = None
    rows, numbers, extra = [], [], []
    start = 1  # first line of the current record (a quoted cell may span lines)
    ncells = 0
    try:
        for lineno, cells in enumerate(reader, start=1):
            row, start = start, reader.line_num + 1
            ncells += len(cells)
            if ncells > MAX_CELLS:
                raise _too_many_cells(source, row)
            if lineno < header_row:
                continue
            if headers is None:
                headers = [c.strip() for c in cells]
                continue
            if not any(c.strip() for c in cells):
                continue
            if len(cells) > len(headers) and any(c.strip() for c in cells[len(headers):]):
                extra.append(Problem(source, row, None,
                                     f"{len(cells)} cells, expected at most {len(headers)} (one per column); "
                                     f"quote a cell that contains the delimiter {delimiter!r}"))
            rows.append(cells)
            numbers.append(row)
    except csv.Error as exc:
        if "unexpected end of data" in str(exc):
            raise _fail(source, "a quoted cell is never closed, expected a closing quote (\")",
                        row=start) from None
        raise _fail(source, f"not valid CSV ({exc})", row=reader.line_num) from None
    if not headers or not any(headers):
        raise _header_missing(source, header_row)
    return [RawTable(source, headers, rows, numbers, header_row=header_row, problems=extra)]


def _xlsx_has_formulas(path: Path, source: str) -> bool:
    """Check the archive before openpyxl parses it: refuse a zip bomb and XML that declares a
    document type (entities: a spreadsheet program never writes one, and entity expansion
    can blow up), and tell whether any worksheet holds a formula (``<f>`` element)."""
    import zipfile

    formulas = False
    try:
        with zipfile.ZipFile(path) as zf:
            members = zf.infolist()
            unpacked = sum(m.file_size for m in members)
            if unpacked > MAX_XLSX_UNPACKED_BYTES:
                members = []
            for m in members:
                sheet = m.filename.startswith("xl/worksheets/") and m.filename.endswith(".xml")
                if not (sheet or m.filename.endswith((".xml", ".rels"))):
                    continue
                with zf.open(m) as fh:
                    tail = b""
                    while chunk := fh.read(1 << 20):
                        text = tail + chunk
                        if b"<!DOCTYPE" in text or b"<!ENTITY" in text:
                            raise _fail(source, f"not a readable .xlsx workbook ({m.filename} declares XML "
                                                "entities (<!DOCTYPE>), which spreadsheet programs never write)")
                        if sheet and (b"<f>" in text or b"<f " in text or b":f>" in text):
                            formulas = True
                        tail = chunk[-9:]
    except (zipfile.BadZipFile, zipfile.LargeZipFile, OSError, EOFError, ValueError) as exc:
        if isinstance(exc, InputError):
            raise
        raise _fail(source, f"not a readable .xlsx workbook ({type(exc).__name__}: {exc})") from None
    if unpacked > MAX_XLSX_UNPACKED_BYTES:
        raise _fail(source, f"workbook unpacks to {unpacked / 1e6:.0f} MB, expected at most "
                            f"{MAX_XLSX_UNPACKED_BYTES / 1e6:.0f} MB; split it")
    return formulas


#: What openpyxl raises on a workbook whose parts are cut off or damaged.
_DAMAGED_XLSX = (KeyError, IndexError, TypeError, ValueError, AttributeError, EOFError, OSError)


def _damaged_xlsx(source: str, exc: Exception) -> InputError:
    from xml.etree.ElementTree import ParseError

    if isinstance(exc, ParseError):
        return _fail(source, f"not a readable .xlsx workbook (damaged XML: {exc})")
    return _fail(source, f"not a readable .xlsx workbook (damaged content: {type(exc).__name__}: {exc})")


def _formulas_without_value(path: Path, name: str, wanted: set) -> dict:
    """``{(row, column): formula}`` of the ``wanted`` cells that hold a formula (second pass)."""
    import openpyxl

    wb = openpyxl.load_workbook(path, read_only=True, data_only=False)
    try:
        found = {}
        for lineno, values in enumerate(wb[name].iter_rows(values_only=True), start=1):
            for col, v in enumerate(values):
                if (lineno, col) in wanted and isinstance(v, str) and v.startswith("="):
                    found[(lineno, col)] = v
        return found
    finally:
        wb.close()


def _column_letter(col: int) -> str:
    letters = ""
    col += 1
    while col:
        col, rem = divmod(col - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


def _read_xlsx(path: Path, source: str, sheet: str | None, header_row: int = 1) -> list[RawTable]:
    """The sheets of a workbook; a damaged one (cut-off XML, cells openpyxl cannot read) is
    one problem of the file, never a traceback."""
    from xml.etree.ElementTree import ParseError

    try:
        return _read_xlsx_sheets(path, source, sheet, header_row)
    except InputError:
        raise
    except (ParseError, *_DAMAGED_XLSX) as exc:
        raise _damaged_xlsx(source, exc) from None


def _read_xlsx_sheets(path: Path, source: str, sheet: str | None, header_row: int = 1) -> list[RawTable]:
    import zipfile
    from xml.etree.ElementTree import ParseError

    import openpyxl

    has_formulas = _xlsx_has_formulas(path, source)
    try:
        wb = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except (zipfile.BadZipFile, KeyError, OSError, ValueError, EOFError) as exc:
        raise _fail(source, f"not a readable .xlsx workbook ({type(exc).__name__}: {exc})") from None
    except ParseError as exc:
        raise _damaged_xlsx(source, exc) from None
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
            ncells = 0
            for lineno, values in enumerate(ws.iter_rows(values_only=True), start=1):
                if lineno < header_row:
                    continue
                if headers is None:
                    headers = ["" if v is None else str(v).strip() for v in values]
                    continue
                ncells += len(headers)
                if ncells > MAX_CELLS:
                    raise _too_many_cells(f"{source}[{name}]", lineno)
                if all(v is None or (isinstance(v, str) and not v.strip()) for v in values):
                    continue
                rows.append(list(values))
                numbers.append(lineno)
            if not headers or not any(headers):
                raise _header_missing(f"{source}[{name}]", header_row)
            while headers and headers[-1] == "":
                headers.pop()
            label = source if len(chosen) == 1 and sheet is None and rtype is None else f"{source}[{name}]"
            width = len(headers)
            problems = [Problem(label, lineno, None, f"a value in column {_column_letter(width)} or beyond, "
                                f"expected at most {width} columns (one per header)")
                        for r, lineno in zip(rows, numbers)
                        if any(v is not None and not (isinstance(v, str) and not v.strip()) for v in r[width:])]
            rows = [r[:width] + [None] * (width - len(r)) for r in rows]
            if has_formulas:
                empty = {(lineno, col) for r, lineno in zip(rows, numbers) for col, v in enumerate(r) if v is None}
                for (lineno, col), formula in sorted(_formulas_without_value(path, name, empty).items()):
                    problems.append(Problem(label, lineno, headers[col] or None,
                                            f"cell {_column_letter(col)}{lineno} holds the formula {formula!r} "
                                            "without a saved value, expected a value (open and save the "
                                            "workbook in a spreadsheet program, or type the value)"))
            tables.append(RawTable(label, headers, rows, numbers, header_row=header_row, record_type=rtype,
                                   problems=problems))
        return tables
    finally:
        wb.close()


class _Object(dict):
    """A JSON object that remembers the keys it was given more than once."""

    duplicates: tuple = ()


def _json_object(pairs) -> _Object:
    obj = _Object(pairs)
    if len(obj) != len(pairs):
        seen: set = set()
        obj.duplicates = tuple(dict.fromkeys(k for k, _ in pairs if k in seen or seen.add(k)))
    return obj


_SCALARS = (str, int, float, bool, _dt.date)


def _cell_problem(value) -> str | None:
    """Why a JSON/YAML cell cannot be one value, or None if it can."""
    if value is None or isinstance(value, _SCALARS):
        return None
    if isinstance(value, dict):
        if "value" not in value or not set(value) <= {"value", "unit"}:
            keys = ", ".join(repr(str(k)) for k in list(value)[:5])
            return f"a mapping with keys {keys}, expected a value or {{value: ..., unit: ...}}"
        if getattr(value, "duplicates", ()):
            return f"key {value.duplicates[0]!r} appears twice in the value, expected once"
        for part in ("value", "unit"):
            if value.get(part) is not None and not isinstance(value[part], _SCALARS):
                return f"a {type(value[part]).__name__} as {part}, expected a single {part}"
        return None
    return f"a {type(value).__name__}, expected a single value"


#: A UTF-16 surrogate alone: JSON and YAML escapes (``\\ud800``) can write one, UTF-8 cannot hold it.
_SURROGATE = re.compile("[\ud800-\udfff]")


def _surrogate(value) -> str | None:
    """The escape of the first lone surrogate in ``value`` (text, or a {value, unit} mapping), or None."""
    texts = value.values() if isinstance(value, dict) else (value,)
    for text in texts:
        if isinstance(text, str) and not text.isascii():
            found = _SURROGATE.search(text)
            if found:
                return found.group().encode("unicode_escape").decode("ascii")
    return None


def _no_surrogate(what: str, value) -> str | None:
    found = _surrogate(value)
    return None if found is None else (f"{what} holds a lone surrogate ({found}), expected valid Unicode text "
                                       "(a JSON or YAML escape of half a character)")


def _list_fields() -> dict:
    """Field name → separator of the fields a JSON/YAML record may give as a list (``mount: [F22, F28]``)."""
    from ..fields import list_separators

    return list_separators()


def _plain_list(value) -> bool:
    return bool(value) and all(isinstance(v, (str, int, float)) and not isinstance(v, bool) for v in value)


def _records_to_tables(doc, source: str) -> list[RawTable]:
    """JSON/YAML: a list of records, or {motors: [...], gearheads: [...], units: {...}}."""
    groups: list[tuple[str | None, list, dict]] = []
    if getattr(doc, "duplicates", ()):
        raise _fail(source, f"top-level key {doc.duplicates[0]!r} appears twice, expected once")
    if isinstance(doc, list):
        groups.append((None, doc, {}))
    elif isinstance(doc, dict):
        units = doc.get("units") or {}
        if not isinstance(units, dict) or any(not isinstance(v, str) for v in units.values()):
            raise _fail(source, "'units' must map field names to unit spellings such as mNm")
        for text in [*doc, *units, *units.values()]:
            why = _no_surrogate(f"key or unit {text!r}", text)
            if why:
                raise _fail(source, why)
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
    if sum(len(rec) if isinstance(rec, dict) else 1 for _, records, _ in groups for rec in records) > MAX_CELLS:
        raise _too_many_cells(source, None)
    tables = []
    for rtype, records, units in groups:
        label = source if len(groups) == 1 else f"{source}[{'motors' if rtype == 'motor' else 'gearheads'}]"
        headers: list[str] = []
        seen = set()
        problems = []
        for i, rec in enumerate(records, start=1):
            if not isinstance(rec, dict):
                kind = {str: "text", int: "number", float: "number", bool: "yes/no value", list: "list"}.get(
                    type(rec), type(rec).__name__)
                raise _fail(source, f"record {i} is a {kind}, expected a mapping of field: value", row=i)
            for k in getattr(rec, "duplicates", ()):
                problems.append(Problem(label, i, str(k), f"key {k!r} appears twice in record {i}, expected once"))
            for k in rec:
                if str(k) not in seen:
                    why = _no_surrogate(f"key {str(k)!r}", str(k))
                    if why:
                        raise _fail(source, why, row=i)
                    seen.add(str(k))
                    headers.append(str(k))
        rows = [[rec.get(h) for h in headers] for rec in records]
        lists = _list_fields()
        for i, row in enumerate(rows):
            for j, cell in enumerate(row):
                if cell is not None and not isinstance(cell, _SCALARS):
                    if isinstance(cell, list) and headers[j] in lists and _plain_list(cell):
                        row[j] = f"{lists[headers[j]]} ".join(str(v).strip() for v in cell)   # ['F22', 'F28']
                        continue
                    why = _cell_problem(cell) or _no_surrogate("the value", cell)
                    if why:
                        problems.append(Problem(label, i + 1, headers[j], why))
                        row[j] = None  # never turned into text
                elif isinstance(cell, str) and not cell.isascii() and _SURROGATE.search(cell):
                    problems.append(Problem(label, i + 1, headers[j], _no_surrogate("the text", cell)))
                    row[j] = None
        tables.append(RawTable(label, headers, rows, list(range(1, len(records) + 1)),
                               header_row=None, record_type=rtype, units={str(k): str(v) for k, v in units.items()},
                               problems=problems))
    return tables


def _json_int(digits: str):
    """A JSON integer; one longer than Python turns into an int (4300 digits) stays its digits,
    which the cell's field then reads (or refuses) as a datasheet cell of those digits."""
    return int(digits) if len(digits) <= 4000 else digits


def _read_json(path: Path, source: str) -> list[RawTable]:
    text = _decode(path.read_bytes(), source)
    try:
        doc = json.loads(text, object_pairs_hook=_json_object, parse_int=_json_int)
    except json.JSONDecodeError as exc:
        raise _fail(source, f"not valid JSON ({exc.msg} at column {exc.colno})", row=exc.lineno) from None
    except RecursionError:
        raise _fail(source, "not valid JSON (nested too deeply), expected a list of flat records") from None
    return _records_to_tables(doc, source)


def yaml_problem(exc) -> tuple[str, int | None]:
    """The message and line of a YAML error, as shown to the user."""
    mark = getattr(exc, "problem_mark", None)
    row = mark.line + 1 if mark is not None else None
    problem = getattr(exc, "problem", None) or str(exc).splitlines()[0]
    if problem.startswith("could not determine a constructor for the tag"):
        tag = problem.rsplit(" ", 1)[-1].strip("'").replace("tag:yaml.org,2002:", "!!")
        problem = (f"tag {tag} is not allowed, expected plain values "
                   "(YAML is loaded safely: no objects are constructed)")
    return problem, row


def _read_yaml(path: Path, source: str) -> list[RawTable]:
    import yaml

    from .yamlsafe import load_data

    text = _decode(path.read_bytes(), source)
    try:
        doc = load_data(text)  # safe loading only: no object construction, bounded aliases
    except yaml.YAMLError as exc:
        problem, row = yaml_problem(exc)
        raise _fail(source, f"not valid YAML ({problem})", row=row) from None
    except RecursionError:
        raise _fail(source, "not valid YAML (nested too deeply)") from None
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
    limit = MAX_YAML_BYTES if suffix in (".yaml", ".yml") else MAX_FILE_BYTES
    if size > limit:
        raise _fail(source, f"file of {size / 1e6:.1f} MB, expected at most {limit / 1e6:.1f} MB "
                            f"for a {suffix} file; split it")
    if size == 0:
        raise _fail(source, "empty file, expected a header row and records")
    if suffix == ".csv":
        return _read_csv(path, source, header_row)
    if suffix == ".xlsx":
        return _read_xlsx(path, source, sheet, header_row)
    if suffix == ".json":
        return _read_json(path, source)
    return _read_yaml(path, source)
