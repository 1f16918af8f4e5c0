"""Reading the shelf: stock lists, low stock, movement history, reservations,
the value history of catalogue records, and what selection may use.

Every function takes an open (read-only is enough) connection and returns a
pandas DataFrame; quantities are counts of pieces.
"""
from __future__ import annotations

__all__ = ["stock_list", "low_stock", "stock_history", "reservations", "record_history", "available_stock",
           "recent_movements"]

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


def record_history(con, record_id: str):
    """Every replaced value of a catalogue record: what it was, what replaced it, when and by which batch.

    Built on ``value_history`` (values moved aside by a re-import or an edit) and
    ``batches``; ``new_*`` is the value that followed (the next replaced one, else
    the current value, empty when the field was removed); ``changed`` is false
    where a re-import wrote the same value again.  ``frame.attrs["record"]`` holds
    the record's creating and last updating batch.
    """
    rtype, manufacturer, part_number = require_record(con, record_id)
    head = con.execute(
        "SELECT r.created_batch, cb.started_at, cb.files, r.updated_batch, ub.started_at, ub.kind, ub.files "
        "FROM records r LEFT JOIN batches cb ON cb.batch_id = r.created_batch "
        "LEFT JOIN batches ub ON ub.batch_id = r.updated_batch WHERE r.record_id = ?", [record_id]).fetchall()[0]
    frame = _frame(con, (
        "WITH h AS (SELECT *, row_number() OVER (PARTITION BY field ORDER BY replaced_at, replaced_by_batch) "
        "AS n FROM value_history WHERE record_id = ?), "
        "nxt AS (SELECT h.field, h.n, coalesce(h2.value_num, CASE WHEN h2.field IS NULL THEN v.value_num END) "
        "AS new_num, coalesce(h2.value_text, CASE WHEN h2.field IS NULL THEN v.value_text END) AS new_text, "
        "coalesce(h2.raw_text, CASE WHEN h2.field IS NULL THEN v.raw_text END) AS new_raw, "
        "coalesce(h2.raw_unit, CASE WHEN h2.field IS NULL THEN v.raw_unit END) AS new_unit, "
        "coalesce(h2.origin, CASE WHEN h2.field IS NULL THEN v.origin END) AS new_origin "
        "FROM h LEFT JOIN h h2 ON h2.field = h.field AND h2.n = h.n + 1 "
        "LEFT JOIN record_values v ON v.record_id = ? AND v.field = h.field) "
        "SELECT h.replaced_at, h.field, h.value_num AS old_value, h.value_text AS old_text, "
        "h.raw_text AS old_raw, h.raw_unit AS old_unit, h.origin AS old_origin, "
        "nxt.new_num AS new_value, nxt.new_text, nxt.new_raw, nxt.new_unit, nxt.new_origin, "
        "h.batch_id AS old_batch, ob.started_at AS old_batch_at, ob.files AS old_files, "
        "h.replaced_by_batch, nb.kind AS replaced_by_kind, nb.files AS replaced_by_files, "
        "nb.user_name AS replaced_by_user "
        "FROM h JOIN nxt USING (field, n) LEFT JOIN batches ob ON ob.batch_id = h.batch_id "
        "LEFT JOIN batches nb ON nb.batch_id = h.replaced_by_batch ORDER BY h.replaced_at, h.field"),
        [record_id, record_id])
    same = lambda a, b: (a.isna() & b.isna()) | (a == b)  # noqa: E731
    frame["changed"] = ~(same(frame["old_value"], frame["new_value"]) & same(frame["old_text"], frame["new_text"])
                         & same(frame["old_raw"], frame["new_raw"]) & same(frame["old_origin"], frame["new_origin"]))
    frame.attrs["record"] = {"id": record_id, "record_type": rtype, "manufacturer": manufacturer,
                             "part_number": part_number, "created_batch": head[0], "created_at": head[1],
                             "created_files": head[2], "updated_batch": head[3], "updated_at": head[4],
                             "updated_kind": head[5], "updated_files": head[6]}
    return frame


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
