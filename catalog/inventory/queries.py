"""Reading the shelf: stock lists, low stock, movement history, reservations,
and what selection may use.

Every function takes an open (read-only is enough) connection and returns a
pandas DataFrame; quantities are counts of pieces.
"""
from __future__ import annotations

__all__ = ["stock_list", "low_stock", "stock_history", "reservations", "available_stock", "stock_value",
           "recent_movements"]

from .ledger import USABLE, require_record


def _frame(con, sql: str, params: list):
    return con.execute(sql, params).fetchdf()


#: Catalogue price and currency per record (the record's given or derived values).
_PRICES = ("(SELECT record_id, max(value_num) FILTER (WHERE field = 'price') AS unit_price, "
           "max(value_text) FILTER (WHERE field = 'currency') AS currency FROM record_values "
           "WHERE field IN ('price', 'currency') GROUP BY record_id)")


def stock_list(con, location: str | None = None, record_id: str | None = None, include_empty: bool = False):
    """Stock items with on hand, reserved and available quantities, and their value.

    ``location`` keeps the items whose location contains the text (ignoring case),
    so ``'Lab 2'`` lists every cabinet of Lab 2.  Items with nothing on hand are left
    out unless ``include_empty``.  Faulty pieces are never available (``available``
    is 0 for a faulty item, as for selection and ``low_stock``).  ``unit_price`` and
    ``currency`` are the catalogue's; ``value`` is on hand × unit price, 0 for faulty
    pieces (not valued), empty where the catalogue has no price.
    """
    sql = ("SELECT s.record_id AS id, record_type, manufacturer, part_number, location, condition, on_hand, "
           "reserved, CAST(CASE WHEN condition IN (SELECT unnest(?)) THEN available ELSE 0 END AS INTEGER) "
           "AS available, p.unit_price, p.currency, "
           "CASE WHEN condition IN (SELECT unnest(?)) THEN on_hand * p.unit_price ELSE 0.0 END AS value, "
           f"serial_numbers, notes, last_movement FROM stock s LEFT JOIN {_PRICES} p USING (record_id) "
           "WHERE (? OR on_hand > 0)")
    params: list = [list(USABLE), list(USABLE), bool(include_empty)]
    if location:
        sql += " AND contains(lower(location), lower(?))"
        params.append(" ".join(str(location).split()))
    if record_id:
        sql += " AND s.record_id = ?"
        params.append(record_id)
    return _frame(con, sql + " ORDER BY location, id, condition", params)


def stock_value(con, location: str | None = None):
    """The value on hand at catalogue prices, per location and currency, with totals.

    One row per location and currency (``location``, ``currency``, ``pieces``
    valued, ``value``), then one ``total`` row per currency (``location`` empty,
    ``scope`` = 'total').  Faulty pieces are not valued; pieces of a record without
    a catalogue price are counted in ``unpriced`` (currency empty); a price without
    a currency has currency empty too.  ``location`` filters as in :func:`stock_list`.
    """
    sql = (f"WITH s AS (SELECT s.location, s.on_hand, p.unit_price, p.currency FROM stock s "
           f"LEFT JOIN {_PRICES} p USING (record_id) WHERE s.on_hand > 0 AND s.condition IN (SELECT unnest(?)) "
           "AND (? IS NULL OR contains(lower(s.location), lower(?)))), "
           "per AS (SELECT 'location' AS scope, location, currency, "
           "CAST(sum(on_hand) FILTER (WHERE unit_price IS NOT NULL) AS INTEGER) AS pieces, "
           "sum(on_hand * unit_price) AS value, "
           "CAST(coalesce(sum(on_hand) FILTER (WHERE unit_price IS NULL), 0) AS INTEGER) AS unpriced "
           "FROM s GROUP BY location, currency), "
           "tot AS (SELECT 'total' AS scope, NULL AS location, currency, CAST(sum(pieces) AS INTEGER) AS pieces, "
           "sum(value) AS value, CAST(sum(unpriced) AS INTEGER) AS unpriced FROM per GROUP BY currency) "
           "SELECT * FROM (SELECT * FROM per UNION ALL SELECT * FROM tot) "
           "ORDER BY scope = 'total', location, currency NULLS LAST")
    loc = " ".join(str(location).split()) if location else None
    return _frame(con, sql, [list(USABLE), loc, loc])


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


def recent_movements(con, limit: int = 50, location: str | None = None):
    """The latest stock movements of the whole shelf, newest first (``location``: text it contains)."""
    sql = ("SELECT m.movement_id, m.moved_at, m.kind, m.record_id AS id, r.manufacturer, r.part_number, m.location, "
           "m.condition, m.quantity_change AS change, m.reserved_change, m.reservation_id, m.person, m.project, "
           "m.reason FROM stock_movements m LEFT JOIN records r USING (record_id) "
           "WHERE (? IS NULL OR contains(lower(m.location), lower(?))) ORDER BY m.movement_id DESC LIMIT ?")
    loc = " ".join(str(location).split()) if location else None
    return _frame(con, sql, [loc, loc, max(1, min(int(limit), 10_000))])


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
