"""DDL of the catalogue file, its migrations and the generated wide views.

The long table ``record_values`` is the source of truth: one row per record and
field, with the SI value, the text as written, where it came from and the import
batch.  The views ``motors`` and ``gearheads`` pivot it into one SI column per
canonical field, generated from the schema files.
"""
from __future__ import annotations

__all__ = ["SCHEMA_VERSION", "MIGRATIONS", "view_sql", "all_view_sql"]

from ..fields import RECORD_TYPES, fields_for

#: Version of the catalogue file layout this code writes.
SCHEMA_VERSION = 3

_V1 = [
    """CREATE TABLE IF NOT EXISTS schema_version (
        version INTEGER NOT NULL, applied_at TIMESTAMP NOT NULL DEFAULT current_timestamp)""",
    """CREATE TABLE IF NOT EXISTS meta (key VARCHAR PRIMARY KEY, value VARCHAR)""",
    """CREATE TABLE IF NOT EXISTS batches (
        batch_id INTEGER PRIMARY KEY, kind VARCHAR NOT NULL, started_at TIMESTAMP NOT NULL,
        files VARCHAR, note VARCHAR, user_name VARCHAR)""",
    """CREATE TABLE IF NOT EXISTS records (
        record_id VARCHAR PRIMARY KEY, record_type VARCHAR NOT NULL,
        manufacturer VARCHAR NOT NULL, part_number VARCHAR NOT NULL,
        created_batch INTEGER NOT NULL, updated_batch INTEGER NOT NULL)""",
    """CREATE TABLE IF NOT EXISTS record_values (
        record_id VARCHAR NOT NULL, field VARCHAR NOT NULL,
        value_num DOUBLE, value_text VARCHAR, raw_text VARCHAR, raw_unit VARCHAR,
        origin VARCHAR NOT NULL, relation VARCHAR, inputs VARCHAR,
        source_file VARCHAR, source_row INTEGER, batch_id INTEGER NOT NULL,
        PRIMARY KEY (record_id, field))""",
    """CREATE TABLE IF NOT EXISTS value_history (
        record_id VARCHAR NOT NULL, field VARCHAR NOT NULL,
        value_num DOUBLE, value_text VARCHAR, raw_text VARCHAR, raw_unit VARCHAR,
        origin VARCHAR NOT NULL, relation VARCHAR, inputs VARCHAR,
        source_file VARCHAR, source_row INTEGER, batch_id INTEGER NOT NULL,
        replaced_by_batch INTEGER NOT NULL, replaced_at TIMESTAMP NOT NULL)""",
    """CREATE TABLE IF NOT EXISTS flags (
        record_id VARCHAR NOT NULL, relation VARCHAR NOT NULL, given VARCHAR,
        field VARCHAR, given_value DOUBLE, implied_value DOUBLE, residual DOUBLE,
        batch_id INTEGER NOT NULL, PRIMARY KEY (record_id, relation))""",
    "CREATE SEQUENCE IF NOT EXISTS batch_seq START 1",
]

# v2: the in-house shelf (catalog/inventory).  Quantities are never stored: on hand and
# reserved are sums over the append-only stock_movements of a stock item (record, location,
# condition); stock_items keeps only the item's serial numbers and notes.
_V2 = [
    "CREATE SEQUENCE IF NOT EXISTS stock_item_seq START 1",
    "CREATE SEQUENCE IF NOT EXISTS stock_movement_seq START 1",
    "CREATE SEQUENCE IF NOT EXISTS stock_reservation_seq START 1",
    """CREATE TABLE IF NOT EXISTS stock_items (
        item_id INTEGER PRIMARY KEY, record_id VARCHAR NOT NULL, location VARCHAR NOT NULL,
        condition VARCHAR NOT NULL, serial_numbers VARCHAR, notes VARCHAR,
        created_at TIMESTAMP NOT NULL, created_batch INTEGER NOT NULL,
        UNIQUE (record_id, location, condition))""",
    """CREATE TABLE IF NOT EXISTS stock_movements (
        movement_id BIGINT PRIMARY KEY, item_id INTEGER NOT NULL, record_id VARCHAR NOT NULL,
        location VARCHAR NOT NULL, condition VARCHAR NOT NULL, kind VARCHAR NOT NULL,
        quantity_change INTEGER NOT NULL, reserved_change INTEGER NOT NULL,
        reservation_id INTEGER, moved_at TIMESTAMP NOT NULL, person VARCHAR, project VARCHAR,
        reason VARCHAR, serial_numbers VARCHAR, batch_id INTEGER NOT NULL)""",
    """CREATE TABLE IF NOT EXISTS stock_levels (
        record_id VARCHAR PRIMARY KEY, min_quantity INTEGER NOT NULL, batch_id INTEGER NOT NULL)""",
    """CREATE OR REPLACE VIEW stock AS SELECT i.item_id, i.record_id, r.record_type, r.manufacturer,
        r.part_number, i.location, i.condition,
        CAST(coalesce(sum(m.quantity_change), 0) AS INTEGER) AS on_hand,
        CAST(coalesce(sum(m.reserved_change), 0) AS INTEGER) AS reserved,
        CAST(coalesce(sum(m.quantity_change), 0) - coalesce(sum(m.reserved_change), 0) AS INTEGER) AS available,
        i.serial_numbers, i.notes, max(m.moved_at) AS last_movement
        FROM stock_items i LEFT JOIN stock_movements m ON m.item_id = i.item_id
        LEFT JOIN records r ON r.record_id = i.record_id
        GROUP BY ALL""",
]

# v3: record_values and flags without their primary-key indexes.  The index of record_values
# cost more than half of a large import (building it and writing it at commit) and seven times
# the table's size on disk, while every writer already deletes a (record, field) before
# inserting it; the writers check the rule themselves (catalog.store.check_unique_values)
# before they commit.  Flags are written by derivation only, one per record and relation.
_V3 = [
    """CREATE TABLE record_values_v3 (
        record_id VARCHAR NOT NULL, field VARCHAR NOT NULL,
        value_num DOUBLE, value_text VARCHAR, raw_text VARCHAR, raw_unit VARCHAR,
        origin VARCHAR NOT NULL, relation VARCHAR, inputs VARCHAR,
        source_file VARCHAR, source_row INTEGER, batch_id INTEGER NOT NULL)""",
    "INSERT INTO record_values_v3 SELECT * FROM record_values ORDER BY record_id, field",
    "DROP VIEW IF EXISTS motors",
    "DROP VIEW IF EXISTS gearheads",
    "DROP TABLE record_values",
    "ALTER TABLE record_values_v3 RENAME TO record_values",
    """CREATE TABLE flags_v3 (
        record_id VARCHAR NOT NULL, relation VARCHAR NOT NULL, given VARCHAR,
        field VARCHAR, given_value DOUBLE, implied_value DOUBLE, residual DOUBLE,
        batch_id INTEGER NOT NULL)""",
    "INSERT INTO flags_v3 SELECT * FROM flags ORDER BY record_id, relation",
    "DROP TABLE flags",
    "ALTER TABLE flags_v3 RENAME TO flags",
]

#: version -> list of statements bringing a file from version-1 to version.
MIGRATIONS: dict[int, list[str]] = {1: _V1, 2: _V2, 3: _V3}


def _column_expr(field) -> str:
    name = field.name
    if field.is_numeric:
        expr = f"max(v.value_num) FILTER (WHERE v.field = '{name}')"
        if field.kind == "integer":
            expr = f"CAST({expr} AS BIGINT)"
        return f"{expr} AS {name}"
    return f"max(v.value_text) FILTER (WHERE v.field = '{name}') AS {name}"


def view_sql(record_type: str) -> str:
    """``CREATE OR REPLACE VIEW`` for the wide view of ``record_type``.

    Field names come from the schema files (checked identifiers, never file text).
    """
    view = {"motor": "motors", "gearhead": "gearheads"}[record_type]
    cols = []
    for field in fields_for(record_type).values():
        if field.name in ("id", "manufacturer", "part_number"):
            continue
        assert field.name.isidentifier()
        cols.append(_column_expr(field))
    return (
        f"CREATE OR REPLACE VIEW {view} AS SELECT r.record_id AS id, r.manufacturer, r.part_number, "
        + ", ".join(cols)
        + " FROM records r LEFT JOIN record_values v ON v.record_id = r.record_id"
        + f" WHERE r.record_type = '{record_type}'"
        + " GROUP BY r.record_id, r.manufacturer, r.part_number"
    )


def all_view_sql(temporary: bool = False) -> list[str]:
    """The views of every record type; ``temporary``: as views of the connection only (they
    shadow the file's own, for a file that cannot be written)."""
    out = [view_sql(t) for t in RECORD_TYPES]
    if temporary:
        out = [sql.replace("CREATE OR REPLACE VIEW", "CREATE OR REPLACE TEMP VIEW", 1) for sql in out]
    return out
