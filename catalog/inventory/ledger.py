"""The stock ledger: stock items and their append-only movements.

A stock item is one catalogue record at one location in one condition.  Its
quantity on hand and its reserved quantity are never stored: they are the sums
of ``quantity_change`` and ``reserved_change`` over the item's rows in
``stock_movements``, so they can be audited and never drift.  Every operation
checks, inside its write transaction, that it leaves ``0 <= reserved <= on
hand`` for every item it touches; otherwise nothing is written.

The functions here take an open write connection and a batch id (see
:mod:`catalog.inventory.operations` for the per-call transactions).
"""
from __future__ import annotations

__all__ = ["CONDITIONS", "USABLE", "KINDS", "clean_location", "check_condition", "check_quantity", "read_count",
           "check_reservation",
           "require_record", "items_of", "find_item", "get_or_create_item", "post", "merge_serials",
           "split_serials"]

import difflib
import re

from ..errors import InputError, NotFound
from ..store import one

#: Conditions of a stock item; faulty pieces are never offered to selection.
CONDITIONS = ("new", "used", "needs-testing", "faulty")
USABLE = ("new", "used", "needs-testing")
#: Movement kinds (``quantity_change`` sign; reservations change ``reserved_change`` only).
KINDS = ("receive", "take", "return", "move-out", "move-in", "adjust", "write-off", "reserve", "release")

_MOVEMENT_COLUMNS = ("item_id", "record_id", "location", "condition", "kind", "quantity_change",
                     "reserved_change", "reservation_id", "moved_at", "person", "project", "reason",
                     "serial_numbers")


def clean_location(text, what: str = "location") -> str:
    """A location as stored: surrounding spaces removed, inner runs of spaces collapsed."""
    loc = re.sub(r"\s+", " ", str(text or "")).strip()
    if not loc:
        raise InputError(f"{what} is empty, expected where the pieces lie (e.g. 'Lab 2 / cabinet B')")
    if len(loc) > 200:
        raise InputError(f"{what} of {len(loc)} characters, expected at most 200")
    return loc


def check_condition(condition) -> str:
    cond = str(condition).strip().lower()
    if cond not in CONDITIONS:
        raise InputError(f"condition {condition!r} is not allowed, expected one of {', '.join(CONDITIONS)}")
    return cond


def read_count(value) -> tuple[int | None, str | None]:
    """(count, None) or (None, why) for a number of pieces as written: a whole number in ASCII
    digits, read as a datasheet number is (:func:`catalog.units.parse_number`: no thousands
    separators, decimal commas, other scripts' digits, nan or inf).  Stock files and the
    stock commands read counts with this one rule."""
    from ..units import NumberError, parse_number

    if isinstance(value, bool):
        return None, f"{str(value).lower()!r} is not a whole number, expected a count of pieces"
    if isinstance(value, int):
        return value, None
    text = repr(value) if isinstance(value, float) else str(value).strip()
    try:
        num = parse_number(text)
    except NumberError as exc:
        if exc.found != "no number":
            return None, str(exc)
        num = None
    if num is None or num != int(num):
        return None, f"{text!r} is not a whole number, expected a count of pieces"
    return int(num), None


def _count_limit(field: str) -> int:
    """The largest count of ``field`` (``quantity``, ``min_quantity``) the stock schema allows."""
    from ..fields import load_schema

    return int(load_schema("stock")["properties"][field]["maximum"])


def check_quantity(quantity, what: str = "quantity", minimum: int = 1, field: str = "quantity") -> int:
    """A count of pieces given to a stock operation, within the stock schema's bounds of ``field``."""
    q, why = read_count(quantity)
    if why:
        raise InputError(f"{what} {why}" if why.startswith("'") else f"{what}: {why}")
    if q < minimum:
        raise InputError(f"{what} {q} is too small, expected at least {minimum}")
    limit = _count_limit(field)
    if q > limit:
        raise InputError(f"{what} {q} is too large, expected at most {limit}")
    return q


#: Reservation numbers are stored as INTEGER.
_MAX_RESERVATION = 2**31 - 1


def check_reservation(number) -> int:
    """A reservation number as given (ASCII digits, in the range the ledger stores)."""
    text = str(number).strip()
    if isinstance(number, bool) or not (text.isascii() and text.isdigit()) or int(text) > _MAX_RESERVATION:
        raise InputError(f"reservation {number!r} is not a reservation number, expected e.g. 3")
    return int(text)


def split_serials(text) -> list[str]:
    if text is None:
        return []
    items = text if isinstance(text, (list, tuple)) else re.split(r"[;,]", str(text))
    return [s.strip() for s in items if s and str(s).strip()]


def merge_serials(current, add=(), remove=()) -> str | None:
    """Serial list ``current`` with ``add`` appended and ``remove`` taken out (';'-separated)."""
    out = [s for s in split_serials(current) if s not in set(remove)]
    for s in add:
        if s not in out:
            out.append(s)
    return ";".join(out) or None


def require_record(con, record_id: str) -> tuple[str, str, str]:
    """(record_type, manufacturer, part_number) of ``record_id``, else :class:`NotFound`."""
    head = one(con.execute("SELECT record_type, manufacturer, part_number FROM records WHERE record_id = ?",
                           [record_id]))
    if head is None:
        ids = [r[0] for r in con.execute("SELECT record_id FROM records").fetchall()]
        close = difflib.get_close_matches(str(record_id), ids, n=5, cutoff=0.5)
        hint = f"; did you mean {', '.join(close)}?" if close else "; `motorshelf list motors` shows the ids"
        raise NotFound(f"no record with id {record_id!r}{hint}", suggestions=close)
    return head


def items_of(con, record_id: str) -> list[dict]:
    """Every stock item of a record with its on-hand, reserved and available quantities."""
    cur = con.execute(
        "SELECT item_id, location, condition, on_hand, reserved, available, serial_numbers, notes "
        "FROM stock WHERE record_id = ? ORDER BY location, condition", [record_id])
    names = [d[0] for d in cur.description]
    return [dict(zip(names, row)) for row in cur.fetchall()]


def _describe(items) -> str:
    return "; ".join(f"{it['location']!r} ({it['condition']}, {it['available']} available"
                     + (f", {it['reserved']} reserved" if it["reserved"] else "") + ")" for it in items)


def find_item(con, record_id: str, location=None, condition=None, usable_only: bool = False,
              verb: str = "take") -> dict:
    """The one stock item an operation without full details means.

    With ``location`` (matched ignoring case) and ``condition`` given the item must
    exist; where either is left out, the items with something on the shelf must
    leave exactly one choice (or one with pieces available), else the error lists
    them.  ``usable_only`` leaves faulty items out when no condition is given.
    """
    require_record(con, record_id)
    items = items_of(con, record_id)
    if not items:
        raise InputError(f"cannot {verb} {record_id}: nothing of it is in stock "
                         f"(`motorshelf stock receive {record_id} ...` records a delivery)")
    chosen = items if location is not None else [it for it in items if it["on_hand"] or it["reserved"]]
    if not chosen:
        raise InputError(f"cannot {verb} {record_id}: nothing of it is left on the shelf")
    if location is not None:
        loc = clean_location(location).lower()
        chosen = [it for it in chosen if it["location"].lower() == loc]
        if not chosen:
            raise InputError(f"cannot {verb} {record_id}: none at {location!r}; it is stocked at "
                             + _describe(items))
    if condition is not None:
        cond = check_condition(condition)
        at = [it for it in chosen if it["condition"] == cond]
        if not at:
            raise InputError(f"cannot {verb} {record_id}: no {cond} pieces"
                             + (f" at {location!r}" if location is not None else "")
                             + "; it is stocked at " + _describe(chosen))
        chosen = at
    elif usable_only:
        usable = [it for it in chosen if it["condition"] in USABLE]
        if not usable:
            raise InputError(f"cannot {verb} {record_id}: only faulty pieces are stocked ({_describe(chosen)}); "
                             "give --condition faulty to use them anyway")
        chosen = usable
    if len(chosen) > 1:
        with_stock = [it for it in chosen if it["available"] > 0]
        if len(with_stock) == 1:
            return with_stock[0]
        raise InputError(f"cannot {verb} {record_id}: stocked in {len(chosen)} places, "
                         f"give --location (and --condition): " + _describe(chosen))
    return chosen[0]


def get_or_create_item(con, batch: int, record_id: str, location: str, condition: str) -> int:
    """Id of the stock item (record, location, condition), created if new.

    Locations match ignoring case; a new item takes the spelling the place already has.
    """
    row = one(con.execute(
        "SELECT item_id FROM stock_items WHERE record_id = ? AND lower(location) = lower(?) AND condition = ?",
        [record_id, location, condition]))
    if row is not None:
        return int(row[0])
    known = one(con.execute("SELECT min_by(location, item_id) FROM stock_items WHERE lower(location) = lower(?)",
                            [location]))
    location = known[0] if known and known[0] else location  # one spelling per place
    item = one(con.execute("SELECT nextval('stock_item_seq')"))[0]
    con.execute(
        "INSERT INTO stock_items (item_id, record_id, location, condition, serial_numbers, notes, created_at, "
        "created_batch) VALUES (?, ?, ?, ?, NULL, NULL, CAST(now() AS TIMESTAMP), ?)",
        [item, record_id, location, condition, batch])
    return int(item)


def _check_balances(con, rows: list[dict]) -> None:
    """Refuse (nothing written) when the rows would leave an item outside ``0 <= reserved <= on hand``."""
    delta: dict = {}
    for r in rows:
        d = delta.setdefault(int(r["item_id"]), [r["record_id"], r["location"], r["condition"], 0, 0])
        d[3] += int(r.get("quantity_change") or 0)
        d[4] += int(r.get("reserved_change") or 0)
    current = {int(i): (int(q), int(res)) for i, q, res in con.execute(
        "SELECT item_id, sum(quantity_change), sum(reserved_change) FROM stock_movements "
        "WHERE item_id IN (SELECT unnest(?)) GROUP BY item_id", [list(delta)]).fetchall()}
    lines = []
    for item, (rid, loc, cond, dq, dr) in sorted(delta.items(), key=lambda kv: kv[1][:3]):
        q, r = current.get(item, (0, 0))
        after_q, after_r = q + dq, r + dr
        if after_q < 0:
            why = f"would leave {after_q} on hand (has {q}, change {dq:+d}); a quantity cannot go below zero"
        elif after_r < 0 or after_r > after_q:
            why = (f"would leave {after_r} reserved of {after_q} on hand; reserved pieces cannot be "
                   "taken, written off or counted away (release or take the reservation first)")
        else:
            continue
        lines.append(f"{rid} at {loc!r} ({cond}): {why}")
    if lines:
        raise InputError("refused, nothing was changed: " + "; ".join(lines))


def post(con, batch: int, rows: list[dict]) -> list[int]:
    """Append movement rows (dicts of the movement columns, time as ``at``) after checking balances.

    Every touched item must end with ``0 <= reserved <= on hand``; otherwise
    :class:`InputError` lists each offending item and nothing is written.  A
    handful of rows (one operation) goes in one parameterised INSERT, more (a
    stock file) as a registered DataFrame.  Returns the new movement ids in row
    order (a move's out-row before its in-row).
    """
    if not rows:
        return []
    _check_balances(con, rows)
    ids = sorted(int(r[0]) for r in con.execute(
        "SELECT nextval('stock_movement_seq') FROM range(?)", [len(rows)]).fetchall())
    values = [[mid] + [r.get("at" if c == "moved_at" else c) for c in _MOVEMENT_COLUMNS] + [batch]
              for mid, r in zip(ids, rows)]
    for v in values:  # quantity_change, reserved_change default 0
        v[6], v[7] = int(v[6] or 0), int(v[7] or 0)
    if len(rows) <= 8:
        one_row = "(?, ?, ?, ?, ?, ?, ?, ?, ?, coalesce(CAST(? AS TIMESTAMP), CAST(now() AS TIMESTAMP)), ?, ?, ?, ?, ?)"
        con.execute("INSERT INTO stock_movements VALUES " + ", ".join([one_row] * len(rows)),
                    [x for v in values for x in v])
        return ids
    import pandas as pd

    frame = pd.DataFrame(values, columns=["movement_id", *_MOVEMENT_COLUMNS, "batch_id"])
    frame["reservation_id"] = frame["reservation_id"].astype("Int64")
    frame["moved_at"] = pd.to_datetime(frame["moved_at"])
    con.register("incoming_movements", frame)
    try:
        con.execute(
            "INSERT INTO stock_movements SELECT movement_id, item_id, record_id, location, condition, kind, "
            "quantity_change, reserved_change, reservation_id, "
            "coalesce(CAST(moved_at AS TIMESTAMP), CAST(now() AS TIMESTAMP)), person, project, reason, "
            "serial_numbers, batch_id FROM incoming_movements")
    finally:
        con.unregister("incoming_movements")
    return ids
