"""Shared output helpers of the CLI: tables in the terminal, CSV and JSON."""
from __future__ import annotations

__all__ = ["FORMAT_OPTION", "UNITS_OPTION", "print_frame", "format_number"]

import math

import click

FORMAT_OPTION = click.option("--format", "fmt", type=click.Choice(["table", "csv", "json"]), default="table",
                             show_default=True, help="Output format.")
UNITS_OPTION = click.option("--units", "units", type=click.Choice(["si", "datasheet", "imperial"]),
                            default="datasheet", show_default=True, help="Units to display values in.")


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
    if fmt == "csv":
        click.echo(df.to_csv(index=False), nl=False)
        return
    if fmt == "json":
        click.echo(df.to_json(orient="records", indent=2, force_ascii=False, double_precision=15))
        return
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    table = Table(title=title, show_lines=False, header_style="bold")
    for col in df.columns:
        numeric = df[col].dtype.kind in "fiu"
        table.add_column(Text(str(col).replace(" [", "\n[")), justify="right" if numeric else "left",
                         overflow="fold")
    for row in df.itertuples(index=False):
        table.add_row(*[Text(format_number(v)) for v in row])
    Console(width=max(100, min(200, 16 * len(df.columns)))).print(table)
