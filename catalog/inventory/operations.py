"""Stock operations, each one write transaction on the catalogue file.

receive, take, return, move, adjust (after a count), write off, reserve and
release each append movement rows (see :mod:`.ledger`) in one transaction with
their own batch (kind ``stock``), after checking every quantity inside that
transaction, so two people working at once never lose a movement.  Each
returns a :class:`StockChange` whose ``message`` is one line for the CLI.
"""
from __future__ import annotations

__all__ = ["StockChange", "receive", "take", "return_", "move", "adjust", "write_off", "reserve", "release"]

from dataclasses import dataclass, field

from ..errors import InputError
from ..store import one
from .ledger import (check_condition, check_quantity, check_reservation, clean_location, find_item,
                     get_or_create_item, items_of, merge_serials, post, require_record, split_serials)


@dataclass
class StockChange:
    """What one stock operation wrote."""

    kind: str
    record_id: str
    quantity: int
    movement_ids: list = field(default_factory=list)
    batch_id: int | None = None
    reservation_id: int | None = None
    items: list = field(default_factory=list)  # (location, condition, on_hand, reserved, available) after
    summary: str = ""

    @property
    def message(self) -> str:
        after = "; ".join(f"{loc!r} ({cond}): {q} on hand, {a} available" + (f", {r} reserved" if r else "")
                          for loc, cond, q, r, a in self.items)
        return self.summary + (f"; now {after}" if after else "")


def _text(value, what: str, limit: int = 200):
    if value is None:
        return None
    text = " ".join(str(value).split())
    if len(text) > limit:
        raise InputError(f"{what} of {len(text)} characters, expected at most {limit}")
    return text or None


def _state(con, item_ids) -> list:
    out = []
    for item in dict.fromkeys(item_ids):
        row = one(con.execute("SELECT location, condition, on_hand, reserved, available FROM stock WHERE item_id = ?",
                              [item]))
        out.append(tuple(row))
    return out


def _check_serials(item, serials, verb):
    known = split_serials(item.get("serial_numbers"))
    unknown = [s for s in serials if known and s not in known]
    if unknown:
        raise InputError(f"cannot {verb} serial {unknown[0]!r}: not recorded at {item['location']!r} "
                         f"(recorded: {', '.join(known)})")


def _set_serials(con, item_id, add=(), remove=()):
    if not add and not remove:
        return
    current = one(con.execute("SELECT serial_numbers FROM stock_items WHERE item_id = ?", [item_id]))[0]
    con.execute("UPDATE stock_items SET serial_numbers = ? WHERE item_id = ?",
                [merge_serials(current, add, remove), item_id])


def _row(item_id, record_id, location, condition, kind, dq, dr=0, **kw) -> dict:
    return {"item_id": item_id, "record_id": record_id, "location": location, "condition": condition,
            "kind": kind, "quantity_change": dq, "reserved_change": dr, **kw}


def _finish(con, change: StockChange, batch, rows, item_ids) -> StockChange:
    change.movement_ids = post(con, batch, rows)
    change.batch_id = batch
    change.items = _state(con, item_ids)
    return change


def receive(store, record_id, quantity, location, condition="new", serial_numbers=None, notes=None,
            person=None, reason=None, min_quantity=None, at=None) -> StockChange:
    """Pieces arrive at ``location``; ``min_quantity`` sets the record's reorder level."""
    q = check_quantity(quantity)
    loc, cond = clean_location(location), check_condition(condition)
    serials = split_serials(serial_numbers)
    notes = _text(notes, "notes", 2000)
    with store.write() as con:
        require_record(con, record_id)
        batch = store.new_batch(con, "stock", note="receive")
        item = get_or_create_item(con, batch, record_id, loc, cond)
        _set_serials(con, item, add=serials)
        if notes:
            con.execute("UPDATE stock_items SET notes = ? WHERE item_id = ?", [notes, item])
        if min_quantity is not None:
            con.execute("INSERT OR REPLACE INTO stock_levels VALUES (?, ?, ?)",
                        [record_id, check_quantity(min_quantity, "min_quantity", 0, "min_quantity"), batch])
        change = StockChange("receive", record_id, q, summary=f"received {q} x {record_id} at {loc!r} ({cond})")
        row = _row(item, record_id, loc, cond, "receive", q, at=at, person=_text(person, "person"),
                   reason=_text(reason, "reason", 2000), serial_numbers=";".join(serials) or None)
        return _finish(con, change, batch, [row], [item])


def return_(store, record_id, quantity, location, condition="used", person=None, project=None, reason=None,
            serial_numbers=None, at=None) -> StockChange:
    """Pieces come back from a project to ``location`` (default condition used)."""
    q = check_quantity(quantity)
    loc, cond = clean_location(location), check_condition(condition)
    serials = split_serials(serial_numbers)
    with store.write() as con:
        require_record(con, record_id)
        batch = store.new_batch(con, "stock", note="return")
        item = get_or_create_item(con, batch, record_id, loc, cond)
        _set_serials(con, item, add=serials)
        who = f" from project {project}" if project else ""
        change = StockChange("return", record_id, q, summary=f"returned {q} x {record_id}{who} to {loc!r} ({cond})")
        row = _row(item, record_id, loc, cond, "return", q, at=at, person=_text(person, "person"),
                   project=_text(project, "project"), reason=_text(reason, "reason", 2000),
                   serial_numbers=";".join(serials) or None)
        return _finish(con, change, batch, [row], [item])


def _reservation(con, reservation_id) -> dict:
    rows = con.execute(
        "SELECT item_id, any_value(record_id), any_value(location), any_value(condition), "
        "sum(reserved_change), max(project), max(person) FILTER (WHERE kind = 'reserve'), "
        "max(kind) FILTER (WHERE movement_id = (SELECT max(movement_id) FROM stock_movements "
        "WHERE reservation_id = ?)) FROM stock_movements WHERE reservation_id = ? GROUP BY item_id",
        [reservation_id, reservation_id]).fetchall()
    if not rows:
        raise InputError(f"no reservation {reservation_id}; `motorshelf stock reservations` lists the open ones")
    item, rid, loc, cond, left, project, person, last = rows[0]
    if left <= 0:
        how = "taken" if last == "take" else "released"
        raise InputError(f"reservation {reservation_id} ({rid} for project {project}) is closed: already {how}")
    return {"item_id": item, "record_id": rid, "location": loc, "condition": cond, "left": int(left),
            "project": project, "person": person}


def take(store, record_id=None, quantity=None, location=None, condition=None, person=None, project=None,
         reason=None, reservation=None, serial_numbers=None, at=None) -> StockChange:
    """Pieces leave the shelf for a project; ``reservation`` turns (part of) a reservation into the take."""
    serials = split_serials(serial_numbers)
    with store.write() as con:
        if reservation is not None:
            res = _reservation(con, check_reservation(reservation))
            if record_id is not None and record_id != res["record_id"]:
                raise InputError(f"reservation {reservation} is for {res['record_id']}, not {record_id}")
            q = res["left"] if quantity is None else check_quantity(quantity)
            if q > res["left"]:
                raise InputError(f"cannot take {q} on reservation {reservation}: only {res['left']} reserved")
            item = {"item_id": res["item_id"], "location": res["location"], "condition": res["condition"]}
            record_id, project = res["record_id"], project or res["project"]
            person = person or res["person"]
            dr = -q
        else:
            if record_id is None or quantity is None:
                raise InputError("take needs a record id and a quantity (or --reservation N)")
            q = check_quantity(quantity)
            if not person or not project:
                raise InputError("take needs who takes the pieces (--person) and for which project (--project)")
            item = find_item(con, record_id, location, condition, usable_only=True, verb="take")
            if q > item["available"]:
                held = f", {item['reserved']} reserved for others" if item["reserved"] else ""
                raise InputError(f"cannot take {q} x {record_id} from {item['location']!r} ({item['condition']}): "
                                 f"{item['available']} available ({item['on_hand']} on hand{held}); "
                                 "nothing was changed")
            dr = 0
        if serials:
            full = one(con.execute("SELECT serial_numbers, location FROM stock_items WHERE item_id = ?",
                                   [item["item_id"]]))
            _check_serials({"serial_numbers": full[0], "location": full[1]}, serials, "take")
        batch = store.new_batch(con, "stock", note="take")
        _set_serials(con, item["item_id"], remove=serials)
        via = f" on reservation {reservation}" if reservation is not None else ""
        change = StockChange("take", record_id, q, reservation_id=reservation,
                             summary=f"took {q} x {record_id} from {item['location']!r} ({item['condition']}) "
                                     f"for project {project}{via}" + (f" by {person}" if person else ""))
        row = _row(item["item_id"], record_id, item["location"], item["condition"], "take", -q, dr,
                   reservation_id=reservation, at=at, person=_text(person, "person"),
                   project=_text(project, "project"), reason=_text(reason, "reason", 2000),
                   serial_numbers=";".join(serials) or None)
        return _finish(con, change, batch, [row], [item["item_id"]])


def move(store, record_id, quantity, to_location, from_location=None, condition=None, to_condition=None,
         person=None, reason=None, serial_numbers=None, at=None) -> StockChange:
    """Pieces move to another location (and/or are re-classified with ``to_condition``)."""
    q = check_quantity(quantity)
    dest = clean_location(to_location, "destination")
    serials = split_serials(serial_numbers)
    with store.write() as con:
        src = find_item(con, record_id, from_location, condition, verb="move")
        new_cond = check_condition(to_condition) if to_condition is not None else src["condition"]
        if dest.lower() == src["location"].lower() and new_cond == src["condition"]:
            raise InputError(f"cannot move {record_id}: source and destination are both {dest!r} ({new_cond})")
        if q > src["available"]:
            raise InputError(f"cannot move {q} x {record_id} from {src['location']!r} ({src['condition']}): "
                             f"{src['available']} available ({src['on_hand']} on hand); nothing was changed")
        _check_serials(src, serials, "move")
        batch = store.new_batch(con, "stock", note="move")
        target = get_or_create_item(con, batch, record_id, dest, new_cond)
        _set_serials(con, src["item_id"], remove=serials)
        _set_serials(con, target, add=serials)
        common = {"at": at, "person": _text(person, "person"), "reason": _text(reason, "reason", 2000),
                  "serial_numbers": ";".join(serials) or None}
        rows = [_row(src["item_id"], record_id, src["location"], src["condition"], "move-out", -q, **common),
                _row(target, record_id, dest, new_cond, "move-in", q, **common)]
        change = StockChange("move", record_id, q, summary=f"moved {q} x {record_id} from {src['location']!r} "
                                                          f"({src['condition']}) to {dest!r} ({new_cond})")
        return _finish(con, change, batch, rows, [src["item_id"], target])


def adjust(store, record_id, counted, location=None, condition=None, person=None, reason=None,
           at=None) -> StockChange:
    """Set an item to the quantity found by a count (an ``adjust`` movement of the difference)."""
    n = check_quantity(counted, "counted quantity", 0)
    with store.write() as con:
        require_record(con, record_id)
        if location is None:
            item = find_item(con, record_id, None, condition, verb="adjust")
        else:
            loc = clean_location(location).lower()
            cond = check_condition(condition) if condition is not None else None
            here = [it for it in items_of(con, record_id) if it["location"].lower() == loc
                    and (cond is None or it["condition"] == cond)]
            if len(here) > 1:
                raise InputError(f"cannot adjust {record_id}: {len(here)} items at {location!r} ("
                                 + ", ".join(it["condition"] for it in here) + "), give --condition")
            item = here[0] if here else None  # None: found where nothing was recorded, a new item
        batch = store.new_batch(con, "stock", note="adjust")
        if item is None:
            loc, cond = clean_location(location), check_condition(condition or "new")
            item = {"item_id": get_or_create_item(con, batch, record_id, loc, cond), "location": loc,
                    "condition": cond, "on_hand": 0}
        diff = n - int(item["on_hand"])
        change = StockChange("adjust", record_id, diff,
                             summary=f"counted {n} x {record_id} at {item['location']!r} ({item['condition']}), "
                                     f"recorded {item['on_hand']}: adjusted by {diff:+d}")
        rows = [] if diff == 0 else [_row(item["item_id"], record_id, item["location"], item["condition"],
                                          "adjust", diff, at=at, person=_text(person, "person"),
                                          reason=_text(reason or "count", "reason", 2000))]
        return _finish(con, change, batch, rows, [item["item_id"]])


def write_off(store, record_id, quantity, reason, location=None, condition=None, person=None,
              serial_numbers=None, at=None) -> StockChange:
    """Pieces leave the books for good (scrapped, lost); a reason is required."""
    q = check_quantity(quantity)
    why = _text(reason, "reason", 2000)
    if not why:
        raise InputError("write-off needs a reason (--reason), e.g. 'burnt winding'")
    serials = split_serials(serial_numbers)
    with store.write() as con:
        item = find_item(con, record_id, location, condition, verb="write off")
        if q > item["available"]:
            raise InputError(f"cannot write off {q} x {record_id} at {item['location']!r} ({item['condition']}): "
                             f"{item['available']} available ({item['on_hand']} on hand); nothing was changed")
        _check_serials(item, serials, "write off")
        batch = store.new_batch(con, "stock", note="write-off")
        _set_serials(con, item["item_id"], remove=serials)
        change = StockChange("write-off", record_id, q, summary=f"wrote off {q} x {record_id} at "
                                                               f"{item['location']!r} ({item['condition']}): {why}")
        row = _row(item["item_id"], record_id, item["location"], item["condition"], "write-off", -q, at=at,
                   person=_text(person, "person"), reason=why, serial_numbers=";".join(serials) or None)
        return _finish(con, change, batch, [row], [item["item_id"]])


def reserve(store, record_id, quantity, project, location=None, condition=None, person=None, reason=None,
            at=None) -> StockChange:
    """Hold pieces for a project: they stay on hand but are no longer available to others."""
    q = check_quantity(quantity)
    proj = _text(project, "project")
    if not proj:
        raise InputError("reserve needs the project the pieces are held for (--project)")
    with store.write() as con:
        item = find_item(con, record_id, location, condition, usable_only=True, verb="reserve")
        if q > item["available"]:
            raise InputError(f"cannot reserve {q} x {record_id} at {item['location']!r} ({item['condition']}): "
                             f"{item['available']} available ({item['on_hand']} on hand, {item['reserved']} "
                             "already reserved); nothing was changed")
        batch = store.new_batch(con, "stock", note="reserve")
        rid = int(one(con.execute("SELECT nextval('stock_reservation_seq')"))[0])
        change = StockChange("reserve", record_id, q, reservation_id=rid,
                             summary=f"reservation {rid}: {q} x {record_id} at {item['location']!r} "
                                     f"({item['condition']}) held for project {proj}")
        row = _row(item["item_id"], record_id, item["location"], item["condition"], "reserve", 0, q,
                   reservation_id=rid, at=at, person=_text(person, "person"), project=proj,
                   reason=_text(reason, "reason", 2000))
        return _finish(con, change, batch, [row], [item["item_id"]])


def release(store, reservation_id, quantity=None, person=None, reason=None, at=None) -> StockChange:
    """Give reserved pieces back to everyone (all that is left of the reservation, or ``quantity``)."""
    reservation_id = check_reservation(reservation_id)
    with store.write() as con:
        res = _reservation(con, reservation_id)
        q = res["left"] if quantity is None else check_quantity(quantity)
        if q > res["left"]:
            raise InputError(f"cannot release {q} of reservation {reservation_id}: only {res['left']} reserved")
        batch = store.new_batch(con, "stock", note="release")
        change = StockChange("release", res["record_id"], q, reservation_id=int(reservation_id),
                             summary=f"released {q} x {res['record_id']} of reservation {reservation_id} "
                                     f"(project {res['project']})")
        row = _row(res["item_id"], res["record_id"], res["location"], res["condition"], "release", 0, -q,
                   reservation_id=int(reservation_id), at=at, person=_text(person, "person"),
                   project=res["project"], reason=_text(reason, "reason", 2000))
        return _finish(con, change, batch, [row], [res["item_id"]])
