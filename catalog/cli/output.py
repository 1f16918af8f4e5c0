"""Shared output helpers of the CLI: tables in the terminal, CSV and JSON (the options: :mod:`.options`)."""
from __future__ import annotations

__all__ = ["print_frame", "format_number", "safe_text", "echo"]

import math
import re

import click

#: Characters a terminal acts on rather than shows: C0 controls but tab and newline, DEL, C1
#: controls (escape sequences start with ESC or CSI), bidirectional overrides and isolates
#: (they reorder what is shown), line and paragraph separators.
_TERMINAL_ACTIVE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u061c\u200e\u200f\u202a-\u202e"
                              "\u2066-\u2069\u2028\u2029]")


def safe_text(text) -> str:
    """``text`` with every terminal-active character written as its escape (ESC as ``\\x1b``).

    Supplier text (part numbers, notes) is shown in the terminal through this, so
    a file can never move the cursor, recolour, clear the screen or reorder what
    the user reads.  Machine formats (CSV, JSON, exports) keep the text exactly.
    """
    return _TERMINAL_ACTIVE.sub(lambda m: m.group().encode("unicode_escape").decode("ascii"), str(text))


def echo(message="", **kwargs) -> None:
    """``click.echo`` of text meant for people, through :func:`safe_text`."""
    click.echo(safe_text(message), **kwargs)


def format_number(value, digits: int = 4) -> str:
    if value is None:
        return ""
    try:
        if isinstance(value, float) and math.isnan(value):
            return ""
    except TypeError:
        pass
    if isinstance(value, float):
        mag = abs(value)
        if 10 ** (digits - 1) <= mag < 1e9:
            return f"{value:.0f}"  # whole numbers need no exponent: 12200, not 1.22e+04
        return f"{value:.{digits}g}"
    return str(value)


def print_frame(df, fmt: str = "table", title: str | None = None) -> None:
    """Print a DataFrame as a terminal table, CSV or JSON records."""
    if fmt == "csv":  # printed for a terminal: escapes as in the tables (`export` writes exact text)
        click.echo(safe_text(df.to_csv(index=False)), nl=False)
        return
    if fmt == "json":  # JSON escapes of the same characters: still exact JSON, inert on a terminal
        text = df.to_json(orient="records", indent=2, force_ascii=False, double_precision=15, date_format="iso")
        click.echo(_TERMINAL_ACTIVE.sub(lambda m: f"\\u{ord(m.group()):04x}", text))
        return
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    table = Table(title=Text(safe_text(title)) if title else None, show_lines=False, header_style="bold")
    for col in df.columns:
        numeric = df[col].dtype.kind in "fiu"
        table.add_column(Text(safe_text(col).replace(" [", "\n[")), justify="right" if numeric else "left",
                         overflow="fold")
    for row in df.itertuples(index=False):
        table.add_row(*[Text(safe_text(format_number(v))) for v in row])
    Console(width=max(100, min(200, 16 * len(df.columns)))).print(table)
