"""The shelf commands: ``stock ...`` (movements, reservations, lists, stock files).

``stock CMD`` calls ``Catalog.stock_CMD`` with options named like its keyword
arguments and prints the result; quantities are validated by the API, so a
wrong one is one ``error:`` line like every other mistake.
"""
from __future__ import annotations

__all__ = ["stock"]

import sys

import click

from . import Context, cli, handle_errors
from .options import FORMAT_OPTION
from .output import echo, print_frame

_CONDITIONS = click.Choice(["new", "used", "needs-testing", "faulty"])
_PERSON = click.option("--person", default=None, metavar="PERSON", help="Who does it (free text).")
_REASON = click.option("--reason", default=None, metavar="TEXT", help="Why (free text).")
_SERIAL = click.option("--serial", "serial_numbers", multiple=True, metavar="SN",
                       help="Serial or lot number of a piece (repeat, or separate with ';').")


def _where(required: bool = False, default_condition=None):
    def deco(f):
        f = click.option("--condition", type=_CONDITIONS, default=default_condition,
                         show_default=default_condition is not None,
                         help="Condition of the pieces" + ("" if default_condition else
                                                          " (needed when the record lies there in several)") + ".")(f)
        return click.option("--location", required=required, default=None, metavar="LOCATION",
                            help="Where the pieces lie, e.g. 'Lab 2 / cabinet B'"
                                 + ("." if required else " (needed when the record is stocked in several places)."))(f)
    return deco


def _done(change) -> None:
    echo(change.message)


@cli.group("stock")
def stock():
    """The in-house shelf: what is in stock, where, and what happened to it."""


@stock.command("receive")
@click.argument("record_id", metavar="ID")
@click.argument("quantity", metavar="QTY")
@_where(required=True, default_condition="new")
@_SERIAL
@click.option("--notes", default=None, metavar="TEXT", help="Notes about the pieces (replace the item's notes).")
@click.option("--min-quantity", default=None, metavar="N",
              help="Reorder level of the record: `stock list --low` shows it below N usable pieces.")
@_PERSON
@_REASON
@click.pass_obj
@handle_errors
def receive_cmd(obj: Context, record_id, quantity, location, condition, serial_numbers, notes, min_quantity, person,
                reason):
    """Record QTY pieces of catalogue record ID arriving at --location."""
    _done(obj.catalog().stock_receive(record_id, quantity, location, condition, ";".join(serial_numbers) or None,
                                      notes, person, reason, min_quantity))


@stock.command("take")
@click.argument("record_id", metavar="[ID]", required=False)
@click.argument("quantity", metavar="[QTY]", required=False)
@_where()
@click.option("--project", default=None, metavar="PROJECT", help="The project the pieces are for.")
@click.option("--reservation", default=None, metavar="N",
              help="Take the pieces of reservation N (all that is left, or QTY of them).")
@_SERIAL
@_PERSON
@_REASON
@click.pass_obj
@handle_errors
def take_cmd(obj: Context, record_id, quantity, location, condition, project, reservation, serial_numbers, person,
             reason):
    """Take QTY pieces of ID off the shelf for a --project (by a --person), or turn a --reservation into a take."""
    if reservation is not None and quantity is None and record_id is not None and record_id.isascii() \
            and record_id.isdigit():
        record_id, quantity = None, record_id  # `take --reservation 3 1`: the one argument is the quantity
    _done(obj.catalog().stock_take(record_id, quantity, location, condition, person, project, reason, reservation,
                                   ";".join(serial_numbers) or None))


@stock.command("return")
@click.argument("record_id", metavar="ID")
@click.argument("quantity", metavar="QTY")
@_where(required=True, default_condition="used")
@click.option("--project", default=None, metavar="PROJECT", help="The project the pieces come back from.")
@_SERIAL
@_PERSON
@_REASON
@click.pass_obj
@handle_errors
def return_cmd(obj: Context, record_id, quantity, location, condition, project, serial_numbers, person, reason):
    """Put QTY pieces of ID back on the shelf at --location (condition used unless given)."""
    _done(obj.catalog().stock_return(record_id, quantity, location, condition, person, project, reason,
                                     ";".join(serial_numbers) or None))


@stock.command("move")
@click.argument("record_id", metavar="ID")
@click.argument("quantity", metavar="QTY")
@click.option("--to-location", required=True, metavar="LOCATION", help="Where the pieces go.")
@click.option("--from-location", default=None, metavar="LOCATION",
              help="Where they lie now (needed when the record is stocked in several places).")
@click.option("--condition", type=_CONDITIONS, default=None, help="Condition of the pieces now.")
@click.option("--to-condition", type=_CONDITIONS, default=None,
              help="New condition, e.g. used after testing or faulty (default: unchanged).")
@_SERIAL
@_PERSON
@_REASON
@click.pass_obj
@handle_errors
def move_cmd(obj: Context, record_id, quantity, to_location, from_location, condition, to_condition, serial_numbers,
             person, reason):
    """Move QTY pieces of ID to another location (or re-classify them with --to-condition)."""
    _done(obj.catalog().stock_move(record_id, quantity, to_location, from_location, condition, to_condition,
                                   person, reason, ";".join(serial_numbers) or None))


@stock.command("adjust")
@click.argument("record_id", metavar="ID")
@click.argument("counted", metavar="COUNTED")
@_where()
@_PERSON
@_REASON
@click.pass_obj
@handle_errors
def adjust_cmd(obj: Context, record_id, counted, location, condition, person, reason):
    """Set ID at --location to the COUNTED number of pieces (writes the difference)."""
    _done(obj.catalog().stock_adjust(record_id, counted, location, condition, person, reason))


@stock.command("write-off")
@click.argument("record_id", metavar="ID")
@click.argument("quantity", metavar="QTY")
@click.option("--reason", required=True, metavar="TEXT", help="Why the pieces leave the books (required).")
@_where()
@_SERIAL
@_PERSON
@click.pass_obj
@handle_errors
def write_off_cmd(obj: Context, record_id, quantity, reason, location, condition, serial_numbers, person):
    """Take QTY pieces of ID off the books for good (scrapped, lost, given away)."""
    _done(obj.catalog().stock_write_off(record_id, quantity, reason, location, condition, person,
                                        ";".join(serial_numbers) or None))


@stock.command("reserve")
@click.argument("record_id", metavar="ID")
@click.argument("quantity", metavar="QTY")
@click.option("--project", required=True, metavar="PROJECT", help="The project the pieces are held for.")
@_where()
@_PERSON
@_REASON
@click.pass_obj
@handle_errors
def reserve_cmd(obj: Context, record_id, quantity, project, location, condition, person, reason):
    """Hold QTY pieces of ID for a --project: they stay on the shelf but are not available to others."""
    _done(obj.catalog().stock_reserve(record_id, quantity, project, location, condition, person, reason))


@stock.command("release")
@click.argument("reservation_id", metavar="RESERVATION")
@click.option("--quantity", default=None, metavar="N", help="Release only N pieces (default: all that are left).")
@_PERSON
@_REASON
@click.pass_obj
@handle_errors
def release_cmd(obj: Context, reservation_id, quantity, person, reason):
    """Give the pieces of a reservation (its number, see `stock reservations`) back to everyone."""
    _done(obj.catalog().stock_release(reservation_id, quantity, person, reason))


@stock.command("reservations")
@click.option("--open-only/--all", "open_only", default=True, show_default=True,
              help="Only open reservations, or also released and taken ones.")
@click.option("--project", default=None, metavar="PROJECT", help="Only this project's reservations.")
@FORMAT_OPTION
@click.pass_obj
@handle_errors
def reservations_cmd(obj: Context, open_only, project, fmt):
    """List the open reservations (number, record, location, pieces left, project)."""
    df = obj.catalog().stock_reservations(open_only=open_only, project=project)
    if fmt == "table" and df.empty:
        echo("no open reservations" if open_only else "no reservations")
        return
    if fmt == "table":
        df = df.assign(reserved_at=df["reserved_at"].dt.strftime("%Y-%m-%d %H:%M"),
                       last_change=df["last_change"].dt.strftime("%Y-%m-%d %H:%M"))
    print_frame(df, fmt, title=f"{len(df)} reservation(s)")


@stock.command("list")
@click.option("--location", default=None, metavar="TEXT", help="Only locations containing TEXT (ignoring case).")
@click.option("--low", is_flag=True, help="Records with fewer usable pieces available than their reorder level.")
@click.option("--include-empty", is_flag=True, help="Also items with nothing left on hand.")
@FORMAT_OPTION
@click.pass_obj
@handle_errors
def list_cmd(obj: Context, location, low, include_empty, fmt):
    """List the stock items: record, location, condition, on hand, reserved, available."""
    cat = obj.catalog()
    df = cat.stock_list(location, include_empty=include_empty, low=low)
    if low:
        title = f"{len(df)} record(s) below their reorder level"
    else:
        if fmt == "table":
            df = df.drop(columns=["record_type", "manufacturer", "part_number", "last_movement", "unit_price"])
            df["value"] = [f"{v:,.2f}" if v == v and v is not None else "" for v in df["value"]]
        title = f"{len(df)} stock item(s), {int(df['on_hand'].sum()) if len(df) else 0} piece(s)"
    if fmt == "table" and df.empty:
        echo("nothing below its reorder level" if low else "no stock" + (f" at {location!r}" if location else ""))
        return
    print_frame(df, fmt, title=title)
    if not low and fmt == "table":
        for line in value_lines(cat.stock_value(location)):
            echo(line)


def value_lines(values) -> list[str]:
    """The stock value of ``Catalog.stock_value`` as lines for people: per location, then the total."""
    def money(rows) -> str:
        parts = [f"{r.value:,.2f} {r.currency}" for r in rows.itertuples(index=False)
                 if r.value == r.value and isinstance(r.currency, str)]
        nocur = rows[rows["currency"].isna() & rows["value"].notna()]
        parts += [f"{v:,.2f} (no currency given)" for v in nocur["value"]]
        return " + ".join(parts) or "-"

    per = values[values["scope"] == "location"]
    total = values[values["scope"] == "total"]
    if per.empty:
        return []
    width = max(len(str(loc)) for loc in per["location"])
    out = ["value on hand at catalogue prices (faulty pieces not valued):"]
    for loc, rows in per.groupby("location", sort=True):
        out.append(f"  {loc:<{width}}  {money(rows)}")
    out.append(f"  {'total':<{width}}  {money(total)}")
    unpriced = int(total["unpriced"].sum())
    if unpriced:
        out.append(f"  {unpriced} piece(s) without a catalogue price are not in these sums")
    return out


@stock.command("history")
@click.argument("record_id", metavar="ID")
@FORMAT_OPTION
@click.pass_obj
@handle_errors
def stock_history_cmd(obj: Context, record_id, fmt):
    """Every stock movement of record ID, oldest first, with the quantities after each."""
    df = obj.catalog().stock_history(record_id)
    if fmt == "table":
        if df.empty:
            echo(f"no stock movements of {record_id}")
            return
        df = df.assign(moved_at=df["moved_at"].dt.strftime("%Y-%m-%d %H:%M")).drop(columns=["batch_id"])
        df = df.drop(columns=[c for c in ("reserved_after", "reservation_id", "serial_numbers")
                              if not df[c].fillna(0).astype(bool).any()])
    print_frame(df, fmt, title=f"{len(df)} movement(s) of {record_id}")


@stock.command("import")
@click.argument("files", nargs=-1, required=True, type=click.Path())
@click.option("--again", is_flag=True, help="Receive a file whose content was received before (once more).")
@_PERSON
@click.pass_obj
@handle_errors
def import_cmd(obj: Context, files, again, person):
    """Receive every row of stock files (CSV, XLSX, JSON, YAML; schemas/stock.schema.json), in one transaction."""
    from ..errors import ImportRejected

    cat = obj.catalog()
    try:
        rows, pieces, batch = cat.stock_import(list(files), person=person, again=again)
    except ImportRejected as exc:
        for p in exc.problems:
            echo(f"error: {p}", err=True)
        echo(f"error: {exc.message}", err=True)
        sys.exit(2)
    echo(f"{cat.path}: received {pieces} piece(s) in {rows} row(s) of {', '.join(files)} (batch {batch})")


@stock.command("count")
@click.argument("path", metavar="FILE", type=click.Path())
@click.option("--apply", is_flag=True, help="Write the differences as adjust movements.")
@click.option("--keep-unlisted", is_flag=True,
              help="Leave items the file does not list alone (default: at a counted location they count as 0).")
@_PERSON
@FORMAT_OPTION
@click.pass_obj
@handle_errors
def count_cmd(obj: Context, path, apply, keep_unlisted, person, fmt):  # noqa: A002
    """Reconcile a counted shelf (a stock file) with the records: show the differences, --apply writes them."""
    from ..errors import ImportRejected

    cat = obj.catalog()
    try:
        diff, applied, batch = cat.stock_count(path, apply=apply, keep_unlisted=keep_unlisted, person=person)
    except ImportRejected as exc:
        for p in exc.problems:
            echo(f"error: {p}", err=True)
        echo(f"error: {exc.message}", err=True)
        sys.exit(2)
    shown = diff.drop(columns=["item_id", "source", "row"])
    if fmt != "table":
        print_frame(shown, fmt)
        return
    if diff.empty:
        echo(f"{path}: the count matches the records")
        return
    print_frame(shown, "table", title=f"{len(diff)} difference(s) between {path} and the records")
    if applied:
        echo(f"{cat.path}: {len(diff)} adjust movement(s) written (batch {batch})")
    else:
        echo(f"nothing written; `motorshelf stock count {path} --apply` writes these as adjust movements")
