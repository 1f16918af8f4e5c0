"""Export the shelf: every stock item with its value, and the value per location and in total.

Values are on hand × the catalogue price, in the record's currency; prices of
several currencies are never added up (one column per currency, headed by it).
Faulty pieces are never available and not valued.
"""
from __future__ import annotations

__all__ = ["stock_tables", "export_stock"]


def _money_columns(name: str, values, currencies) -> list:
    from .columns import price_columns

    cols = price_columns(name, values, currencies)
    for c in cols:
        if c.title is None and c.name != name:
            c.title = name
    return cols


def stock_tables(cat, location: str | None = None) -> list:
    """``[stock items table, stock value table]`` of ``cat`` (``location``: text the location contains)."""
    from .columns import Table, quantity_column, text_column

    items = cat.stock_list(location)
    values = cat.stock_value(location)
    cols = [text_column(c, items[c].tolist()) for c in
            ("id", "record_type", "manufacturer", "part_number", "location", "condition")]
    cols += [quantity_column(c, items[c].tolist(), "count", integer=True) for c in ("on_hand", "reserved",
                                                                                     "available")]
    cols += _money_columns("unit_price", items["unit_price"].tolist(), items["currency"].tolist())
    cols += _money_columns("value", items["value"].tolist(), items["currency"].tolist())
    cols.append(text_column("currency", items["currency"].tolist()))
    cols += [text_column(c, items[c].tolist()) for c in ("serial_numbers", "notes")]
    cols.append(text_column("last_movement", [None if t != t or t is None else str(t)
                                              for t in items["last_movement"].tolist()]))
    main = Table("stock", cols, note="faulty pieces are never available and not valued", freeze_columns=1)
    vcols = [text_column("scope", values["scope"].tolist()), text_column("location", values["location"].tolist()),
             text_column("currency", values["currency"].tolist()),
             quantity_column("pieces", values["pieces"].tolist(), "count", integer=True)]
    vcols += _money_columns("value", values["value"].tolist(), values["currency"].tolist())
    vcols.append(quantity_column("unpriced", values["unpriced"].tolist(), "count", integer=True))
    return [main, Table("stock value", vcols, note="on hand × catalogue price; faulty pieces not valued",
                        freeze_columns=2)]


def export_stock(cat, path, units: str = "metric"):
    """Write the shelf and its value to ``path`` (``.xlsx``: both sheets; CSV/Parquet: the items).

    Returns ``(Path, number of stock items)``.
    """
    from .catalogue import about_block
    from .writers import format_for, write_tables_to_file

    fmt = format_for(path)
    tables = stock_tables(cat)
    about = about_block(cat, units if fmt != "parquet" else "si", export="stock", records=len(tables[0]),
                        value="on hand × catalogue price, per currency; faulty pieces not valued")
    return write_tables_to_file(tables, path, about), len(tables[0])
