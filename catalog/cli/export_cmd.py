"""Export commands: ``export`` (the catalogue to a file), ``report`` (HTML) and ``plot`` (diagrams)."""
from __future__ import annotations

__all__ = ["export_cmd", "report_cmd", "plot_cmd", "parse_params", "OUT_UNITS_OPTION"]

import sys
from pathlib import Path

import click

from . import Context, cli, handle_errors
from .output import QUERY_LIMIT_OPTIONS, echo

OUT_UNITS_OPTION = click.option(
    "--units", "units", type=click.Choice(["si", "datasheet", "imperial"]), default="datasheet",
    show_default=True, help="Units of the values written (Parquet always keeps SI).")
SIDE_OPTION = click.option(
    "--side", type=click.Choice(["motor", "load"]), default="motor", show_default=True,
    help="Draw each candidate's diagram at the motor shaft or at the gear output.")


def _fail(option: str, message: str):
    from ..errors import InputError, Problem

    raise InputError(f"{option}: {message}", [Problem(option, None, None, message)])


def parse_params(items) -> dict:
    """``NAME=VALUE`` strings → ``{name: value}``; integers and decimals become numbers."""
    out = {}
    for item in items:
        name, sep, value = item.partition("=")
        name = name.strip().lstrip("$")
        if not sep or not name.isidentifier():
            _fail("--param", f"{item!r} is not NAME=VALUE, expected e.g. --param max_mass=0.2")
        text = value.strip()
        try:
            out[name] = int(text)
        except ValueError:
            try:
                out[name] = float(text)
            except ValueError:
                out[name] = value
    return out


def _check_out(path: str, allowed: tuple) -> Path:
    out = Path(path)
    if out.suffix.lower() not in allowed:
        _fail("--out", f"{path!r} has the extension {out.suffix or '(none)'!r}, expected one of "
              f"{', '.join(allowed)}")
    if not out.parent.exists():
        _fail("--out", f"{path!r}: folder {str(out.parent)!r} does not exist")
    return out


@cli.command("export")
@click.argument("kind", type=click.Choice(["motors", "gearheads"]))
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False), metavar="FILE",
              help="Output file: .xlsx, .csv, .json or .parquet (the format follows the extension).")
@click.option("--where", default=None, metavar="CONDITION",
              help="SQL condition on the motors/gearheads view (SI units), e.g. \"mass < $m AND mount = 'F22'\".")
@click.option("--param", "params", multiple=True, metavar="NAME=VALUE",
              help="A named value of --where ($NAME), e.g. --param m=0.2; repeat for several.")
@OUT_UNITS_OPTION
@QUERY_LIMIT_OPTIONS
@click.pass_obj
@handle_errors
def export_cmd(obj: Context, kind, out, where, params, units, time_limit, memory_limit):
    """Write the motors or gearheads of the catalogue (all, or those matching --where) to a file.

    XLSX has a sheet with the records and one with the provenance of every value; ids and part
    numbers are text cells.  CSV (RFC 4180, UTF-8) has the records only: a spreadsheet opening a
    CSV may still turn part numbers into dates, use the XLSX for spreadsheets.
    """
    from ..export.catalogue import export_catalogue
    from ..export.writers import FORMATS

    path = _check_out(out, tuple(FORMATS))
    values = parse_params(params)
    cat = obj.catalog()
    written, count = export_catalogue(cat, kind, path, where=where, params=values, units=units,
                                      time_limit=time_limit, memory_limit=memory_limit)
    shown = "si (Parquet keeps SI)" if path.suffix.lower() == ".parquet" else units
    echo(f"{written}: {count} {kind} written ({shown} units)")


@cli.command("report")
@click.argument("envelope", type=click.Path(dir_okay=False))
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False), metavar="FILE",
              help="The HTML file to write (self-contained: opens offline, prints cleanly).")
@click.option("--top", type=click.IntRange(min=1), default=None, metavar="N",
              help="Shortlist length (default: the envelope's ranking.top, else 10).")
@click.option("--plots", "plots", type=click.IntRange(min=0), default=None, metavar="N",
              help="Diagrams for the first N shortlisted candidates (default all).")
@OUT_UNITS_OPTION
@SIDE_OPTION
@click.pass_obj
@handle_errors
def report_cmd(obj: Context, envelope, out, top, plots, units, side):
    """Select against ENVELOPE and write the HTML report: envelope, shortlist, speed-torque diagrams,
    rejection reasons, provenance of the values and cautions.

    Exit code 0 when at least one candidate passes, 1 when none does (the report is written
    either way), 2 on input errors.
    """
    from ..export.report import write_report

    path = _check_out(out, (".html", ".htm"))
    cat = obj.catalog()
    sel = cat.select(envelope, top=top)
    write_report(sel, path, units=units, catalog=cat, side=side, plots=plots)
    n_pass, n_rej = sel.counts
    echo(f"{path}: report of {sel.envelope.name}: {n_pass + n_rej} candidate(s), "
         f"{n_pass} pass, {len(sel.shortlist)} on the shortlist")
    sys.exit(0 if n_pass else 1)


@cli.command("plot")
@click.argument("envelope", type=click.Path(dir_okay=False))
@click.option("--out", "out", required=True, type=click.Path(file_okay=False), metavar="FOLDER",
              help="Folder receiving one diagram per candidate and compare.<format>.")
@click.option("--candidate", "candidates", multiple=True, metavar="ID",
              help="Draw this candidate (repeat for several; default the shortlist).")
@click.option("--top", type=click.IntRange(min=1), default=None, metavar="N",
              help="Shortlist length (default: the envelope's ranking.top, else 10).")
@click.option("--format", "fmt", type=click.Choice(["png", "svg"]), default="png", show_default=True,
              help="Image format.")
@OUT_UNITS_OPTION
@SIDE_OPTION
@click.pass_obj
@handle_errors
def plot_cmd(obj: Context, envelope, out, candidates, top, fmt, units, side):
    """Select against ENVELOPE and draw the speed-torque diagram of each shortlisted candidate."""
    from ..export.figures import write_plots

    cat = obj.catalog()
    sel = cat.select(envelope, top=top)
    paths = write_plots(sel, out, catalog=cat, units=units, side=side, fmt=fmt,
                        candidates=list(candidates) or None)
    for p in paths:
        echo(str(p))
    if not paths:
        echo("no candidate meets the envelope: nothing to draw")
    sys.exit(0 if paths else 1)
