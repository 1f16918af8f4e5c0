"""Reading the shelf: stock lists, low stock, movement history, reservations,
and what selection may use.

Every function takes an open (read-only is enough) connection and returns a
pandas DataFrame; quantities are counts of pieces.
"""
from __future__ import annotations

__all__ = ["stock_list", "low_stock", "stock_history", "reservations", "available_stock"]

from .ledger import USABLE, require_record


def _frame(con, sql: str, params: list):
    return con.execute(sql, params).fetchdf()


def stock_list(con, location: str | None = None, record_id: str | None = None, include_empty: bool = False):
    """Stock items with on hand, reserved and available quantities.

    ``location`` keeps the items whose location contains the text (ignoring case),
    so ``'Lab 2'`` lists every cabinet of Lab 2.  Items with nothing on hand are left
    out unless ``include_empty``.
    """
    sql = ("SELECT record_id AS id, record_type, manufacturer, part_number, location, condition, on_hand, "
           "reserved, available, serial_numbers, notes, last_movement FROM stock WHERE (? OR on_hand > 0)")
    params: list = [bool(include_empty)]
    if location:
        sql += " AND contains(lower(location), lower(?))"
        params.append(" ".join(str(location).split()))
    if record_id:
        sql += " AND record_id = ?"
        params.append(record_id)
    return _frame(con, sql + " ORDER BY location, id, condition", params)


def low_stock(con, location: str | None = None):
    """Records of the shelf with fewer usable pieces available than their reorder level.

    The level is ``min_quantity`` (``stock_levels``, set by a receive or a stock
    file), default 1: a record whose last usable piece is taken or reserved is low.
    Only records that have ever been stocked are considered.
    """
    sql = ("WITH s AS (SELECT record_id, any_value(manufacturer) AS manufacturer, any_value(part_number) "
           "AS part_number, sum(on_hand) AS on_hand, sum(reserved) AS reserved, "
           "sum(available) FILTER (WHERE condition IN (SELECT unnest(?))) AS usable, "
           "string_agg(DISTINCT location, '; ' ORDER BY location) AS locations FROM stock "
           "WHERE (? IS NULL OR contains(lower(location), lower(?))) GROUP BY record_id) "
           "SELECT s.record_id AS id, s.manufacturer, s.part_number, CAST(s.on_hand AS INTEGER) AS on_hand, "
           "CAST(s.reserved AS INTEGER) AS reserved, CAST(coalesce(s.usable, 0) AS INTEGER) AS usable_available, "
           "coalesce(l.min_quantity, 1) AS min_quantity, s.locations FROM s "
           "LEFT JOIN stock_levels l USING (record_id) WHERE coalesce(s.usable, 0) < coalesce(l.min_quantity, 1) "
           "ORDER BY id")
    loc = " ".join(str(location).split()) if location else None
    return _frame(con, sql, [list(USABLE), loc, loc])


def stock_history(con, record_id: str):
    """Every stock movement of one record, oldest first, with the item's quantities after it."""
    require_record(con, record_id)
    return _frame(con, (
        "SELECT movement_id, moved_at, kind, location, condition, quantity_change AS change, "
        "CAST(sum(quantity_change) OVER w AS INTEGER) AS on_hand_after, "
        "CAST(sum(reserved_change) OVER w AS INTEGER) AS reserved_after, reservation_id, person, project, "
        "reason, serial_numbers, batch_id FROM stock_movements WHERE record_id = ? "
        "WINDOW w AS (PARTITION BY item_id ORDER BY movement_id) ORDER BY movement_id"), [record_id])


def reservations(con, open_only: bool = True, project: str | None = None):
    """Reservations with what is left of each (``left`` = still held)."""
    sql = ("SELECT reservation_id, any_value(record_id) AS id, any_value(location) AS location, "
           "any_value(condition) AS condition, CAST(sum(reserved_change) FILTER (WHERE kind = 'reserve') AS INTEGER) "
           "AS reserved, CAST(sum(reserved_change) AS INTEGER) AS left, any_value(project) AS project, "
           "max(person) FILTER (WHERE kind = 'reserve') AS person, min(moved_at) AS reserved_at, "
           "max(moved_at) AS last_change FROM stock_movements WHERE reservation_id IS NOT NULL "
           "AND (? IS NULL OR lower(project) = lower(?)) GROUP BY reservation_id "
           "HAVING NOT ? OR sum(reserved_change) > 0 ORDER BY reservation_id")
    return _frame(con, sql, [project, project, bool(open_only)])


def available_stock(con, conditions=USABLE):
    """What selection may take from the shelf: one row per record with pieces available.

    Returns a DataFrame with ``record_id``, ``available`` (on hand minus reserved,
    summed over the usable conditions, faulty left out), ``on_hand``,
    ``locations`` (``'Lab 2 / cabinet A (3); Field kit (1)'``, most first) and
    ``conditions``.  Records with nothing available are not listed.
    """
    sql = ("WITH s AS (SELECT record_id, location, condition, available, on_hand FROM stock "
           "WHERE condition IN (SELECT unnest(?)) AND available > 0), "
           "per_loc AS (SELECT record_id, location, sum(available) AS a FROM s GROUP BY ALL) "
           "SELECT s.record_id, CAST(sum(s.available) AS INTEGER) AS available, "
           "CAST(sum(s.on_hand) AS INTEGER) AS on_hand, "
           "(SELECT string_agg(p.location || ' (' || p.a || ')', '; ' ORDER BY p.a DESC, p.location) "
           "FROM per_loc p WHERE p.record_id = s.record_id) AS locations, "
           "string_agg(DISTINCT s.condition, ', ' ORDER BY s.condition) AS conditions "
           "FROM s GROUP BY s.record_id ORDER BY s.record_id")
    return _frame(con, sql, [list(conditions)])
