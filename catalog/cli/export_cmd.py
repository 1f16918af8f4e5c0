"""Export commands: ``export`` (the catalogue to a file), ``report`` (HTML) and ``plot`` (diagrams)."""
from __future__ import annotations

__all__ = ["export_cmd", "report_cmd", "plot_cmd", "parse_params"]

import sys

import click

from ..export.formats import FORMATS, IMAGE_FORMATS, REPORT_EXTENSIONS, extension_list
from . import Context, cli, handle_errors
from .options import OUT_UNITS_OPTION, QUERY_LIMIT_OPTIONS, SIDE_OPTION, TOP_OPTION
from .output import echo


def parse_params(items) -> dict:
    """``NAME=VALUE`` strings → ``{name: value}``; integers and decimals become numbers."""
    from ..errors import InputError, Problem

    out = {}
    for item in items:
        name, sep, value = item.partition("=")
        name = name.strip().lstrip("$")
        if not sep or not name.isidentifier():
            message = f"{item!r} is not NAME=VALUE, expected e.g. --param max_mass=0.2"
            raise InputError(f"--param: {message}", [Problem("--param", None, None, message)])
        text = value.strip()
        try:
            out[name] = int(text)
        except ValueError:
            try:
                out[name] = float(text)
            except ValueError:
                out[name] = value
    return out


@cli.command("export")
@click.argument("kind", type=click.Choice(["motors", "gearheads", "stock"]))
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False), metavar="FILE",
              help=f"Output file: {extension_list()} (the format follows the extension).")
@click.option("--where", default=None, metavar="CONDITION",
              help="SQL condition on the motors/gearheads view (SI units), e.g. "
                   "'mass < $m AND mount = $mount' --param m=0.2 --param mount=F22 (in single quotes, "
                   "so that the shell leaves $ and < alone).")
@click.option("--param", "params", multiple=True, metavar="NAME=VALUE",
              help="A named value of --where ($NAME), e.g. --param m=0.2; repeat for several.")
@OUT_UNITS_OPTION
@QUERY_LIMIT_OPTIONS
@click.pass_obj
@handle_errors
def export_cmd(obj: Context, kind, out, where, params, units, time_limit, memory_limit):
    """Write the motors or gearheads of the catalogue (all, or those matching --where) to a file,
    or the stock: every item with its value, and the value per location and in total.

    XLSX has a sheet with the records and one with the provenance of every value; ids and part
    numbers are text cells.  CSV (RFC 4180, UTF-8) has the records only: a spreadsheet opening a
    CSV may still turn part numbers into dates, use the XLSX for spreadsheets.
    """
    written, count = obj.catalog().export(kind, out, where=where, params=parse_params(params), units=units,
                                          time_limit=time_limit, memory_limit=memory_limit)
    fmt = FORMATS[written.suffix.lower()]
    shown = f"si ({fmt.label} keeps SI)" if fmt.keeps_si else units
    echo(f"{written}: {count} {'stock items' if kind == 'stock' else kind} written ({shown} units)")


@cli.command("report")
@click.argument("envelope", type=click.Path(dir_okay=False))
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False), metavar="FILE",
              help=f"The HTML file to write ({extension_list(REPORT_EXTENSIONS)}; self-contained: opens offline, "
                   "prints cleanly).")
@TOP_OPTION
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
    sel = obj.catalog().report(envelope, out, top=top, plots=plots, units=units, side=side)
    n_pass, n_rej = sel.counts
    echo(f"{out}: report of {sel.envelope.name}: {n_pass + n_rej} candidate(s), "
         f"{n_pass} pass, {len(sel.shortlist)} on the shortlist")
    sys.exit(0 if n_pass else 1)


@cli.command("plot")
@click.argument("envelope", type=click.Path(dir_okay=False))
@click.option("--out", "out", required=True, type=click.Path(file_okay=False), metavar="FOLDER",
              help="Folder receiving one diagram per candidate and compare.<format>.")
@click.option("--candidate", "candidates", multiple=True, metavar="ID",
              help="Draw this candidate (repeat for several; default the shortlist).")
@TOP_OPTION
@click.option("--format", "format", type=click.Choice(list(IMAGE_FORMATS)), default=next(iter(IMAGE_FORMATS)),
              show_default=True, help="Image format.")
@OUT_UNITS_OPTION
@SIDE_OPTION
@click.pass_obj
@handle_errors
def plot_cmd(obj: Context, envelope, out, candidates, top, format, units, side):  # noqa: A002
    """Select against ENVELOPE and draw the speed-torque diagram of each shortlisted candidate."""
    paths = obj.catalog().plot(envelope, out, candidates=list(candidates) or None, top=top, format=format,
                               units=units, side=side)
    for p in paths:
        echo(str(p))
    if not paths:
        echo("no candidate meets the envelope: nothing to draw")
    sys.exit(0 if paths else 1)
