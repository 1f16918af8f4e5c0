"""The file formats motorshelf writes, one table per kind of output.

:data:`FORMATS` maps the extension of a table export (the catalogue, a
selection) to its format: the writer function of :mod:`catalog.export.writers`
that writes it and whether it keeps SI whatever display units are asked for.
:data:`IMAGE_FORMATS` are the diagram formats, :data:`REPORT_EXTENSIONS` those of
the HTML report.  Help texts and checks are made from these tables
(:func:`extension_list`, :func:`keeps_si_text`), so a new format is one entry
here and its writer function.  This module imports nothing heavy: the command
line reads it to build its help texts.
"""
from __future__ import annotations

__all__ = ["ExportFormat", "FORMATS", "IMAGE_FORMATS", "REPORT_EXTENSIONS", "extension_list", "keeps_si_text",
           "export_format"]

from typing import NamedTuple


class ExportFormat(NamedTuple):
    """One file format of the table exports."""

    name: str        #: format name, e.g. ``xlsx``
    label: str       #: as people write it, e.g. ``XLSX``
    extension: str   #: file extension with its dot
    writer: str      #: name of the function of :mod:`catalog.export.writers` writing it: ``f(tables, path, about)``
    keeps_si: bool   #: values are written in SI whatever display units are asked for
    holds: str       #: what the file holds


#: File extension → format of the table exports, the recommended one first.
FORMATS = {f.extension: f for f in (
    ExportFormat("xlsx", "XLSX", ".xlsx", "write_xlsx", False,
                 "every table as a sheet plus an about sheet; ids and part numbers as text cells"),
    ExportFormat("csv", "CSV", ".csv", "write_csv", False, "the first table (RFC 4180, UTF-8)"),
    ExportFormat("json", "JSON", ".json", "write_json", False,
                 "the first table as records with the units stated once, the others under tables"),
    ExportFormat("parquet", "Parquet", ".parquet", "write_parquet", True,
                 "the first table in SI, the unit in each column's metadata"),
)}
#: Image formats of the diagrams (the extension without its dot; the first is the default) → the
#: keyword arguments matplotlib's ``savefig`` gets for it (SVG: no date, so that a file is reproducible).
IMAGE_FORMATS = {"png": {"dpi": 150}, "svg": {"metadata": {"Date": None}}}
#: File extensions of the HTML report.
REPORT_EXTENSIONS = (".html", ".htm")


def export_format(name: str) -> ExportFormat:
    """The :class:`ExportFormat` called ``name`` (``xlsx``, ``csv``, ...); unknown → ValueError."""
    for f in FORMATS.values():
        if f.name == name:
            return f
    raise ValueError(f"unknown export format {name!r}, expected one of {', '.join(f.name for f in FORMATS.values())}")


def extension_list(extensions=None, last: str = "or") -> str:
    """``.xlsx, .csv, .json or .parquet``: the extensions (default: of :data:`FORMATS`) for a help text."""
    items = list(FORMATS if extensions is None else extensions)
    return items[0] if len(items) == 1 else f"{', '.join(items[:-1])} {last} {items[-1]}"


def keeps_si_text() -> str:
    """``Parquet always keeps SI``: the formats that ignore the display units, for a help text."""
    labels = [f.label for f in FORMATS.values() if f.keeps_si]
    if not labels:
        return "every format writes the units asked for"
    return f"{extension_list(labels, 'and')} always keep{'s' if len(labels) == 1 else ''} SI"
