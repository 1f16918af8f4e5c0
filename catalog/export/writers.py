"""Writers: :class:`~catalog.export.columns.Table` lists to CSV, XLSX, JSON, Parquet.

The format follows the file extension: :data:`catalog.export.formats.FORMATS`
maps each extension to its writer here and says whether the format keeps SI.
A new format is one entry there and its writer function here, called
``writer(tables, path, about)``.

* **XLSX** (the spreadsheet-safe format): one sheet per table plus ``about``;
  numbers are number cells with a number format per column, text is written
  as string cells with the ``@`` (text) format, so part numbers such as
  ``00341-06`` or ``007210`` never become dates or lose their zeros; header
  row frozen, autofilter on, column widths to fit.
* **CSV**: RFC 4180 (comma, CRLF, double quotes where needed), UTF-8 without
  byte-order mark, the first table only.  CSV has no cell types: a
  spreadsheet that opens it guesses, and may turn ``00341-06`` into a date
  whether or not it is quoted.  Ids are written as the plain text they are;
  open the XLSX (or import the CSV with the id columns set to text) to keep them.
* **JSON**: ``{"units": {column: unit}, "records": [...]}`` for the first
  table, the others under ``"tables"``, the run details under ``"about"``.
* **Parquet**: the first table in SI, plain column names, the unit in each
  column's field metadata (``unit``, ``dimension``).

Text that a spreadsheet would read as a formula (starting with ``=``, ``+``,
``-``, ``@``, a tab or a carriage return) is neutralised in the spreadsheet
formats: a leading apostrophe in CSV, a string cell with the quote-prefix
flag in XLSX (the text itself unchanged).  XLSX cannot hold most control
characters at all: they are written as their escapes (:func:`xlsx_text`).
"""
from __future__ import annotations

__all__ = ["format_for", "check_out", "units_written", "write_tables_to_file", "write_xlsx", "write_csv",
           "write_json", "write_parquet", "neutralise", "xlsx_text", "number_format", "FORMULA_PREFIXES"]

import json
import math
from copy import copy
from pathlib import Path

from ..errors import InputError, Problem
from .formats import FORMATS, export_format

#: First characters that make a spreadsheet read a text cell as a formula.
FORMULA_PREFIXES = ("=", "+", "-", "@", "\t", "\r")

_HEADER_FILL = "E4ECE8"   # pale sage
_MAX_WIDTH = 48


def xlsx_text(value) -> str:
    """``value`` as XLSX cell text: control characters XML 1.0 cannot hold written as escapes.

    A workbook cannot store C0 controls other than tab, newline and carriage
    return; rather than refuse the whole export, such a character is written
    as its escape (``\\x1d``), as the terminal shows it.  Line breaks are written
    as newlines (a reader of the XML would turn a carriage return into one anyway).
    """
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    text = str(value).replace("\r\n", "\n").replace("\r", "\n")
    return ILLEGAL_CHARACTERS_RE.sub(lambda m: m.group().encode("unicode_escape").decode("ascii"), text)


def neutralise(text: str) -> str:
    """``text`` with a leading apostrophe if a spreadsheet would run it as a formula."""
    if isinstance(text, str) and text.startswith(FORMULA_PREFIXES):
        return "'" + text
    return text


def _finite(v):
    return v is not None and not (isinstance(v, float) and (math.isnan(v) or math.isinf(v)))


def number_format(value, digits: int | None = None, integer: bool = False) -> str:
    """The number format of one cell: ``value`` with ``digits`` significant digits (at least three).

    Formats are chosen per cell, not per column: a column of 350 and 0.45 shows
    ``350`` and ``0.450``, never ``0`` (:func:`catalog.export.columns.display_format`).
    """
    from .columns import MIN_DIGITS, display_format

    if integer:
        return "0"
    return display_format(value, digits or MIN_DIGITS)


# -- CSV -------------------------------------------------------------------------
def _csv_cell(col, v) -> str:
    if v is None:
        return ""
    if col.kind == "bool":
        return "true" if v else "false"
    if col.is_numeric:
        if isinstance(v, float) and math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return str(v) if isinstance(v, int) else repr(float(v))
    return neutralise(str(v))


def write_csv(tables, path: Path, about: dict) -> None:  # noqa: ARG001 (CSV has no place for it)
    """The first of ``tables`` as CSV (RFC 4180, UTF-8, CRLF); ``about`` has no place in CSV."""
    import csv

    table = tables[0]
    with path.open("w", encoding="utf-8", newline="") as fh:
        w = csv.writer(fh, dialect="excel", lineterminator="\r\n", quoting=csv.QUOTE_MINIMAL)
        w.writerow([c.header for c in table.columns])
        for i in range(len(table)):
            w.writerow([_csv_cell(c, c.values[i]) for c in table.columns])


# -- JSON ------------------------------------------------------------------------
def _json_value(v):
    if isinstance(v, float) and (math.isnan(v) or math.isinf(v)):
        return None
    return v


def _json_table(table) -> dict:
    """``units`` and ``records`` (one dict per row, as :meth:`Table.records`, NaN and infinities None)."""
    names = [c.name for c in table.columns]
    columns = [[None if isinstance(v, float) and (v != v or v in _INFINITIES) else v for v in c.values]
               for c in table.columns]
    return {"units": table.units, "records": [dict(zip(names, row)) for row in zip(*columns)]
            if names else [{} for _ in range(len(table))]}


_INFINITIES = (math.inf, -math.inf)


def json_document(tables, about: dict) -> dict:
    """The JSON export of ``tables`` as a dict: ``about``, the first table at the top level
    (``table``, ``units``, ``records``) and the others under ``tables``."""
    doc = {"about": about, "table": tables[0].name, **_json_table(tables[0])}
    if len(tables) > 1:
        doc["tables"] = {t.name: _json_table(t) for t in tables[1:]}
    return doc


def write_json(tables, path: Path, about: dict) -> None:
    """``{"about", "table", "units", "records", "tables"}``: :func:`json_document` written to ``path``."""
    doc = json_document(tables, about)
    path.write_text(json.dumps(doc, ensure_ascii=False, indent=2) + "\n", encoding="utf-8")


# -- Parquet ---------------------------------------------------------------------
def write_parquet(tables, path: Path, about: dict) -> None:
    """The first of ``tables`` in SI, the unit in each column's field metadata, ``about`` in the file metadata."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = tables[0]
    fields, arrays = [], []
    for c in table.columns:
        meta = {}
        if c.is_numeric:
            typ = pa.int64() if c.kind == "integer" else pa.float64()
            meta = {"unit": c.si_unit, "dimension": c.dimension or ""}
            data = [None if v is None or (isinstance(v, float) and math.isnan(v)) else
                    (int(v) if c.kind == "integer" and not math.isinf(v) else v) for v in c.si]
            if c.kind == "integer":
                data = [None if isinstance(v, float) else v for v in data]
        elif c.kind == "bool":
            typ, data = pa.bool_(), c.si
        else:
            typ, data = pa.string(), c.si
        fields.append(pa.field(c.name, typ, metadata={k.encode(): v.encode() for k, v in meta.items()} or None))
        arrays.append(pa.array(data, type=typ))
    schema = pa.schema(fields, metadata={b"motorshelf": json.dumps(about, ensure_ascii=False).encode()})
    pq.write_table(pa.Table.from_arrays(arrays, schema=schema), path)


# -- XLSX ------------------------------------------------------------------------
def _display_len(v, fmt: str = "") -> int:
    if v is None:
        return 0
    if isinstance(v, float):
        if "E" in fmt:
            return 10
        decimals = len(fmt.split(".")[1]) if "." in fmt else 0
        try:
            return len(f"{v:,.{decimals}f}")
        except (ValueError, OverflowError):
            return 8
    text = str(v)
    return max(len(line) for line in text.splitlines()) if text else 0


def _sheet_title(name: str, used: set) -> str:
    bad = '[]:*?/\\'
    title = "".join("_" if ch in bad else ch for ch in name)[:31] or "sheet"
    base, n = title, 2
    while title.lower() in used:
        title = f"{base[:28]}-{n}"
        n += 1
    used.add(title.lower())
    return title


def _xlsx_sheet(wb, table, used: set) -> None:
    from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
    from openpyxl.utils import get_column_letter

    ws = wb.create_sheet(_sheet_title(table.name, used))
    head_font = Font(bold=True)
    head_fill = PatternFill("solid", fgColor=_HEADER_FILL)
    head_border = Border(bottom=Side(style="thin", color="7A8C84"))
    head_align = Alignment(wrap_text=True, vertical="bottom")
    top_align = Alignment(vertical="top", wrap_text=False)
    wrap_align = Alignment(vertical="top", wrap_text=True)
    n = len(table)
    for j, col in enumerate(table.columns, start=1):
        cell = ws.cell(row=1, column=j, value=col.header)
        cell.data_type = "s"
        cell.font, cell.fill, cell.border, cell.alignment = head_font, head_fill, head_border, head_align
        long_text = not col.is_numeric and any(
            isinstance(v, str) and (len(v) > _MAX_WIDTH or "\n" in v) for v in col.values)
        styles = {}   # one style per kind of cell, copied (setting styles cell by cell is slow)

        def style_of(key, c, number_format, quote=False):
            if key not in styles:
                c.number_format = number_format
                c.alignment = wrap_align if long_text else top_align
                if quote:
                    c.quotePrefix = True
                styles[key] = copy(c._style)
            else:
                c._style = copy(styles[key])

        width = 0
        for i, v in enumerate(col.values):
            c = ws.cell(row=i + 2, column=j)
            if v is None or (isinstance(v, float) and (math.isnan(v) or math.isinf(v))):
                if not col.is_numeric:
                    style_of("text", c, "@")
                continue
            fmt = "@"
            if col.is_numeric:
                c.value = v
                fmt = col.cell_format(i)       # digits kept per cell, whatever the magnitude
                style_of(("num", fmt), c, fmt)
            elif col.kind == "bool":
                c.value = bool(v)
                style_of("bool", c, "General")
            else:
                text = xlsx_text(v)
                c.value = text
                c.data_type = "s"          # never a formula, whatever it starts with
                quote = text.startswith(FORMULA_PREFIXES)
                style_of("quoted" if quote else "text", c, "@", quote)
            if i < 2000:
                width = max(width, _display_len(v, fmt))
        words = col.header.replace("[", " [").split()
        head_need = max([len(w) for w in words] + [min(len(col.header), 18)])
        ws.column_dimensions[get_column_letter(j)].width = min(_MAX_WIDTH, max(width, head_need, 6) + 2)
    last = get_column_letter(max(1, len(table.columns)))
    ws.freeze_panes = f"{get_column_letter(table.freeze_columns + 1)}2"
    ws.auto_filter.ref = f"A1:{last}{n + 1}"
    ws.row_dimensions[1].height = 32 if any(len(c.header) > 18 for c in table.columns) else 18


def write_xlsx(tables, path: Path, about: dict) -> None:
    """One sheet per table and an ``about`` sheet (spreadsheet-safe text cells, number formats, filters)."""
    from openpyxl import Workbook

    from .columns import Table, text_column

    wb = Workbook()
    wb.remove(wb.active)
    used: set = set()
    for t in tables:
        _xlsx_sheet(wb, t, used)
    keys = list(about)
    info = Table("about", [text_column("item", keys), text_column("value", [_about_text(about[k]) for k in keys])])
    _xlsx_sheet(wb, info, used)
    wb.properties.creator = "motorshelf"
    wb.properties.title = str(about.get("title", ""))
    _save_workbook(wb, path)


def _save_workbook(wb, path: Path) -> None:
    """``wb.save(path)``, closing the archive when writing fails (a full disk): left open, it
    would fail again when collected and print a traceback at exit."""
    import datetime
    import zipfile

    from openpyxl.writer.excel import ExcelWriter

    archive = zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED, allowZip64=True)
    wb.properties.modified = datetime.datetime.now(tz=datetime.timezone.utc).replace(tzinfo=None)
    try:
        ExcelWriter(wb, archive).save()
    except BaseException:
        try:
            archive.close()
        except OSError:
            pass  # the error being raised says it already
        raise


def _about_text(v) -> str:
    if isinstance(v, (list, tuple)):
        return "; ".join(map(str, v))
    if isinstance(v, dict):
        return "; ".join(f"{k}: {x}" for k, x in v.items())
    return "" if v is None else str(v)


def write_tables_to_file(tables, path, about: dict | None = None, fmt: str | None = None) -> Path:
    """Write ``tables`` (a list of :class:`Table`, the main one first) to the file ``path``.

    (Writing imported records into the catalogue is :func:`catalog.ingest.writer.store_tables`.)

    Parameters
    ----------
    tables : list of Table
        The first table is the one CSV and Parquet hold.
    path : str or Path
        Output file; its folder must exist.
    about : dict, optional
        Run details (program version, catalogue, preset, date ...): the XLSX
        ``about`` sheet, the JSON ``about`` object, Parquet file metadata.
    fmt : str, optional
        A format name of :data:`FORMATS` (``xlsx``, ``csv``, ...); default from the extension.

    Returns
    -------
    Path
        The file written.
    """
    path = Path(path)
    fmt = export_format(fmt or format_for(path))
    about = dict(about or {})
    if not path.parent.exists():
        msg = _missing_folder(path)
        raise InputError(f"{path}: {msg}", [Problem(str(path), None, None, msg)])
    from ..store.files import output_file

    with output_file(path) as tmp:  # a new file of its own, renamed over path when whole
        globals()[fmt.writer](tables, tmp, about)   # the writer the format table names, in this module
    return path


def _unknown_extension(path, extensions) -> str:
    ext = Path(path).suffix.lower()
    return f"unknown file extension {ext or '(none)'!r}, expected one of {', '.join(extensions)}"


def _missing_folder(path: Path) -> str:
    return f"folder {str(path.parent)!r} does not exist"


def format_for(path) -> str:
    """The export format name of ``path`` from its extension; unknown → InputError."""
    ext = Path(path).suffix.lower()
    if ext not in FORMATS:
        msg = _unknown_extension(path, FORMATS)
        raise InputError(f"{path}: {msg}", [Problem(str(path), None, None, msg)])
    return FORMATS[ext].name


def units_written(path, units: str) -> str:
    """The units a file at ``path`` is written in: ``si`` for a format that keeps SI, else ``units``."""
    return "si" if FORMATS[Path(path).suffix.lower()].keeps_si else units


def check_out(path, extensions=None) -> Path:
    """``path`` checked as an output file before any work: a known extension, an existing folder.

    ``extensions`` defaults to those of :data:`FORMATS`.  A mistake is an
    :class:`~catalog.errors.InputError` on ``--out`` (the option of every
    command that writes a file, and the keyword of the matching API method).
    """
    out = Path(path)
    extensions = tuple(FORMATS if extensions is None else extensions)
    if out.suffix.lower() not in extensions:
        msg = f"{path}: {_unknown_extension(path, extensions)}"
    elif not out.parent.exists():
        msg = f"{path}: {_missing_folder(out)}"
    else:
        return out
    raise InputError(f"--out: {msg}", [Problem("--out", None, None, msg)])
