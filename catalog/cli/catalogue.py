"""Catalogue commands: import, validate, list, show, sql."""
from __future__ import annotations

import sys

import click

from . import Context, cli, handle_errors
from .output import FORMAT_OPTION, QUERY_LIMIT_OPTIONS, UNITS_OPTION, echo, format_number, print_frame


def _echo_problems(problems, prefix="error"):
    for p in problems:
        echo(f"{prefix}: {p}", err=True)


def _print_report(report, verb: str) -> None:
    for f in report.files:
        state = "ok" if not f.problems else ("rejected" if f.accepted == 0 else f"{len(f.problems)} problem(s)")
        echo(f"{f.source}: {f.record_type or '?'}s, {f.rows} row(s), {f.accepted} {verb}, "
                   f"{f.converted} value(s) converted to SI [{state}]")
    _echo_problems(report.warnings, "warning")


@cli.command("import")
@click.argument("files", nargs=-1, required=True, type=click.Path())
@click.option("--mapping", type=click.Path(), default=None, metavar="PROFILE",
              help="Mapping profile (YAML) for files with a supplier's own column headers.")
@click.option("--keep-valid", is_flag=True, help="Import the valid rows and write the rejected ones to --rejects.")
@click.option("--rejects", type=click.Path(dir_okay=False), default=None, metavar="FILE",
              help="CSV file receiving the rejected rows with their reasons (with --keep-valid).")
@click.pass_obj
@handle_errors
def import_cmd(obj: Context, files, mapping, keep_valid, rejects):
    """Import datasheet files (CSV, XLSX, JSON, YAML) into the catalogue, in one transaction."""
    from ..errors import ImportRejected

    cat = obj.catalog()
    try:
        report = cat.import_files(list(files), mapping=mapping, keep_valid=keep_valid, rejects=rejects)
    except ImportRejected as exc:
        _print_report(exc.report, "importable")
        _echo_problems(exc.problems)
        echo(f"error: {len(exc.problems)} problem(s); nothing was imported, {cat.path} is unchanged", err=True)
        sys.exit(2)
    _print_report(report, "imported")
    if report.problems:
        _echo_problems(report.problems)
    echo(f"{cat.path}: {report.created} record(s) created, {report.updated} updated, "
               f"{report.values} value(s) stored, {report.converted} converted to SI"
               + (f", {report.derived} derived" if report.derived else ""))
    for flag in report.flags:
        echo(f"flag: {flag}")
    if report.rejects_file:
        echo(f"{len(report.problems)} problem(s); rejected rows written to {report.rejects_file}")
        sys.exit(2)


@cli.command("validate")
@click.argument("files", nargs=-1, required=True, type=click.Path())
@click.option("--mapping", type=click.Path(), default=None, metavar="PROFILE",
              help="Mapping profile (YAML) for files with a supplier's own column headers.")
@click.pass_obj
@handle_errors
def validate_cmd(obj: Context, files, mapping):
    """Check datasheet files as an import would, writing nothing."""
    report = obj.catalog().validate_files(list(files), mapping=mapping)
    _print_report(report, "valid")
    if report.problems:
        _echo_problems(report.problems)
        echo(f"error: {len(report.problems)} problem(s)", err=True)
        sys.exit(2)
    echo("all files valid")


@cli.command("list")
@click.argument("kind", type=click.Choice(["motors", "gearheads"]))
@UNITS_OPTION
@FORMAT_OPTION
@click.pass_obj
@handle_errors
def list_cmd(obj: Context, kind, units, fmt):
    """List the motors or gearheads of the catalogue (main columns, in display units)."""
    from ..present import LIST_COLUMNS, display_frame

    cat = obj.catalog()
    rtype = kind[:-1]
    df = cat.motors() if kind == "motors" else cat.gearheads()
    out = display_frame(df, rtype, units, columns=LIST_COLUMNS[rtype])
    print_frame(out, fmt, title=f"{len(out)} {kind} in {cat.path}")


@cli.command("show")
@click.argument("record_id", metavar="ID")
@UNITS_OPTION
@click.pass_obj
@handle_errors
def show_cmd(obj: Context, record_id, units):
    """Show every field of one record with its value, unit and origin."""
    from ..fields import fields_for
    from ..present import display_value

    rtype, manufacturer, part_number, values = obj.catalog().record(record_id)
    by_field = {row.field: row for row in values.itertuples(index=False)}
    echo(f"{record_id}  ({rtype}: {manufacturer} {part_number})")
    for name, f in fields_for(rtype).items():
        if name in ("id", "manufacturer", "part_number"):
            continue
        row = by_field.get(name)
        if row is None:
            echo(f"  {name:<36} -")
            continue
        if f.is_numeric:
            v, label = display_value(row.value_num, f.dimension, units, field=f)
            text = f"{format_number(v, 5)} {label}".strip()
        else:
            text = str(row.value_text)
        if row.origin == "derived":
            origin = f"derived: {row.relation}" + (f", from {row.inputs}" if row.inputs else "")
        else:
            where = f"{row.source_file}:{int(row.source_row)}" if row.source_file else ""
            raw = row.raw_text if row.raw_text is not None else ""
            unit = row.raw_unit if isinstance(row.raw_unit, str) and row.raw_unit and row.raw_unit not in raw else ""
            written = f"{raw!r}" + (f" [{unit}]" if unit else "")
            origin = f"given: {written} ({where})"
        echo(f"  {name:<36} {text:<22} {origin}")
    flags = obj.catalog().flags(record_id=record_id)
    for flag in flags:
        echo(f"flag: {flag}")


@cli.command("sql")
@click.argument("query")
@FORMAT_OPTION
@QUERY_LIMIT_OPTIONS
@click.pass_obj
@handle_errors
def sql_cmd(obj: Context, query, fmt, time_limit, memory_limit):
    """Run a read-only SQL query on the catalogue (views: motors, gearheads; SI units)."""
    df = obj.catalog().sql(query, time_limit=time_limit, memory_limit=memory_limit)
    print_frame(df, fmt)


@cli.command("derive")
@click.option("--tolerance", type=float, default=0.10, show_default=True,
              help="Relative residual above which an over-determined relation is flagged.")
@click.pass_obj
@handle_errors
def derive_cmd(obj: Context, tolerance):
    """Fill in every motor constant that follows from the given ones, marking it derived."""
    cat = obj.catalog()
    outcome = cat.derive(tolerance=tolerance)
    echo(f"{cat.path}: {outcome.derived} value(s) derived, {len(outcome.flags)} flag(s) "
               f"above {tolerance:.0%}")
    for flag in outcome.flags:
        echo(f"flag: {flag}")


@cli.command("check")
@click.option("--tolerance", type=float, default=0.10, show_default=True,
              help="Relative residual above which an over-determined relation is flagged.")
@FORMAT_OPTION
@click.pass_obj
@handle_errors
def check_cmd(obj: Context, tolerance, fmt):
    """List every consistency flag; exit code 1 when any residual exceeds the tolerance."""
    import pandas as pd

    flags = obj.catalog().flags(tolerance=tolerance)
    df = pd.DataFrame([{
        "id": f.record_id, "relation": f.relation, "field": f.field, "given_si": f.given_value,
        "implied_si": f.implied_value, "residual": f.residual, "given_values_si": f.given,
    } for f in flags], columns=["id", "relation", "field", "given_si", "implied_si", "residual", "given_values_si"])
    if fmt == "table":
        if not flags:
            echo(f"no flags above {tolerance:.0%}")
        for f in flags:
            echo(f"flag: {f}")
    else:
        print_frame(df, fmt)
    sys.exit(1 if flags else 0)
