"""Catalogue commands: import, validate, list, show, sql, derive, check, history."""
from __future__ import annotations

import sys

import click

from . import Context, cli, handle_errors
from .options import FORMAT_OPTION, QUERY_LIMIT_OPTIONS, UNITS_OPTION
from .output import echo, format_number, print_frame


def _echo_problems(problems, prefix="error"):
    for p in problems:
        echo(f"{prefix}: {p}", err=True)


def _print_report(report, verb: str) -> None:
    for f in report.files:
        state = "ok" if not f.problems else ("rejected" if f.accepted == 0 else f"{len(f.problems)} problem(s)")
        echo(f"{f.source}: {f.record_type or '?'}s, {f.rows} row(s), {f.accepted} {verb}, "
                   f"{f.converted} value(s) converted to SI, {_mapping_words(f)} [{state}]")
    _echo_problems(report.warnings, "warning")


def _mapping_words(result) -> str:
    """Which mapping a file was read with, for the import and validate lines."""
    if not getattr(result, "mapping", None):
        return "canonical headers (no mapping)"
    return f"mapping {result.mapping} ({result.mapping_from})"


def _files_and_mappings(files, mapping):
    """FILE or FILE=MAPPING arguments → (paths, mapping for the API: one profile or {file: profile})."""
    from ..ingest.manifest import split_file_argument

    paths, own = [], {}
    for arg in files:
        path, mp = split_file_argument(arg)
        paths.append(path)
        if mp is not None:
            own[path] = mp
    if not own:
        return paths, mapping
    return paths, {p: own.get(p, mapping) for p in paths}


_MANIFEST_OPTION = click.option(
    "--manifest", type=click.Path(dir_okay=False), default=None, metavar="FILE",
    help="Import manifest (YAML): the mapping profile of each file by file name or pattern.")


@cli.command("import")
@click.argument("files", nargs=-1, required=True, type=click.Path())
@click.option("--mapping", type=click.Path(), default=None, metavar="PROFILE",
              help="Mapping profile (YAML) for the files without one of their own (FILE=PROFILE or --manifest).")
@_MANIFEST_OPTION
@click.option("--keep-valid", is_flag=True, help="Import the valid rows and write the rejected ones to --rejects.")
@click.option("--rejects", type=click.Path(dir_okay=False), default=None, metavar="FILE",
              help="CSV file receiving the rejected rows with their reasons (with --keep-valid).")
@click.pass_obj
@handle_errors
def import_cmd(obj: Context, files, mapping, manifest, keep_valid, rejects):
    """Import datasheet files (CSV, XLSX, JSON, YAML) into the catalogue, in one transaction.

    Each FILE may carry its own mapping profile as FILE=PROFILE (a supplier's own headers);
    --manifest chooses profiles by file pattern; --mapping serves the files left.
    """
    from ..errors import ImportRejected

    cat = obj.catalog()
    paths, mapping = _files_and_mappings(files, mapping)
    try:
        report = cat.import_(paths, mapping=mapping, keep_valid=keep_valid, rejects=rejects, manifest=manifest)
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
              help="Mapping profile (YAML) for the files without one of their own (FILE=PROFILE or --manifest).")
@_MANIFEST_OPTION
@click.pass_obj
@handle_errors
def validate_cmd(obj: Context, files, mapping, manifest):
    """Check datasheet files as an import would, writing nothing (FILE=PROFILE: a file's own mapping)."""
    paths, mapping = _files_and_mappings(files, mapping)
    report = obj.catalog().validate(paths, mapping=mapping, manifest=manifest)
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
    cat = obj.catalog()
    out = cat.list(kind, units=units)
    print_frame(out, fmt, title=f"{len(out)} {kind} in {cat.path}")


@cli.command("show")
@click.argument("record_id", metavar="ID")
@UNITS_OPTION
@click.pass_obj
@handle_errors
def show_cmd(obj: Context, record_id, units):
    """Show every field of one record with its value, unit and origin, then its consistency flags."""
    rec = obj.catalog().show(record_id, units=units)
    echo(f"{record_id}  ({rec.record_type}: {rec.manufacturer} {rec.part_number})")
    for row in rec.values.itertuples(index=False):
        if not isinstance(row.origin, str):
            echo(f"  {row.field:<36} -")
            continue
        if row.value == row.value:   # a number, in the display units
            text = f"{format_number(row.value, 5)} {row.unit}".strip()
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
        echo(f"  {row.field:<36} {text:<22} {origin}")
    if rec.basis_note:
        echo(f"  selection reads the constants: {rec.basis_note}")
    for flag in rec.flags:
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


TOLERANCE_OPTION = click.option(
    "--tolerance", type=float, default=None, metavar="FRACTION",
    help="Relative residual above which an over-determined relation is flagged (default 0.1: 10 %).")


def _tolerance(tolerance):
    from ..derive import DEFAULT_TOLERANCE

    return DEFAULT_TOLERANCE if tolerance is None else tolerance


@cli.command("derive")
@TOLERANCE_OPTION
@click.pass_obj
@handle_errors
def derive_cmd(obj: Context, tolerance):
    """Fill in every motor constant that follows from the given ones, marking it derived."""
    cat = obj.catalog()
    outcome = cat.derive(tolerance=tolerance)
    echo(f"{cat.path}: {outcome.derived} value(s) derived, {len(outcome.flags)} flag(s) "
         f"above {_tolerance(tolerance):.0%}")
    for flag in outcome.flags:
        echo(f"flag: {flag}")


@cli.command("check")
@TOLERANCE_OPTION
@FORMAT_OPTION
@click.pass_obj
@handle_errors
def check_cmd(obj: Context, tolerance, fmt):
    """List every consistency flag; exit code 1 when any residual exceeds the tolerance."""
    import pandas as pd

    flags = obj.catalog().check(tolerance=tolerance)
    if fmt == "table":
        if not flags:
            echo(f"no flags above {_tolerance(tolerance):.0%}")
        for f in flags:
            echo(f"flag: {f}")
    else:
        print_frame(pd.DataFrame([{
            "id": f.record_id, "relation": f.relation, "field": f.field, "given_si": f.given_value,
            "implied_si": f.implied_value, "residual": f.residual, "given_values_si": f.given,
        } for f in flags], columns=["id", "relation", "field", "given_si", "implied_si", "residual",
                                    "given_values_si"]), fmt)
    sys.exit(1 if flags else 0)


@cli.command("history")
@click.argument("record_id", metavar="ID")
@click.option("--changed-only/--all", "changed_only", default=True, show_default=True,
              help="Only values that changed, or also values a re-import wrote again unchanged.")
@FORMAT_OPTION
@click.pass_obj
@handle_errors
def history_cmd(obj: Context, record_id, changed_only, fmt):
    """Every change of catalogue record ID: old and new value, when, and by which batch (file)."""
    df = obj.catalog().history(record_id, changed_only=changed_only)
    rec = df.attrs["record"]
    if fmt != "table":
        print_frame(df, fmt)
        return
    when = lambda t: t.strftime("%Y-%m-%d %H:%M") if t is not None and t == t else "?"  # noqa: E731
    echo(f"{record_id}  ({rec['record_type']}: {rec['manufacturer']} {rec['part_number']})")
    echo(f"  created {when(rec['created_at'])} by batch {rec['created_batch']} ({rec['created_files'] or '-'}); "
         f"last changed {when(rec['updated_at'])} by batch {rec['updated_batch']} ({rec['updated_kind']}"
         + (f": {rec['updated_files']}" if rec["updated_files"] else "") + ")")
    if df.empty:
        hint = " (--all also shows values written again unchanged)" if changed_only else ""
        echo("  no value was changed since" + hint)
        return

    def shown(num, text, raw, unit, origin):
        written = "" if raw is None or raw != raw else f" ({raw}{' ' + unit if isinstance(unit, str) and unit else ''})"
        value = f"{num:.6g}" if num is not None and num == num else (text if isinstance(text, str) else "-")
        return value + (written or (f" ({origin})" if isinstance(origin, str) else ""))

    for r in df.itertuples(index=False):
        old = shown(r.old_value, r.old_text, r.old_raw, r.old_unit, r.old_origin)
        new = shown(r.new_value, r.new_text, r.new_raw, r.new_unit, r.new_origin)
        by = f"{r.replaced_by_kind} {r.replaced_by_files or ''}".strip()
        echo(f"  {when(r.replaced_at)}  {r.field:<34} {old} -> {new}  "
             f"[batch {r.old_batch} -> {r.replaced_by_batch}: {by}]")
