"""The in-house shelf: stock items, movements, reservations, stock files.

Tables (layout version 2, :mod:`catalog.store.schema`): ``stock_items`` (one
per catalogue record, location and condition; serial numbers and notes),
``stock_movements`` (append-only: time, kind, quantity change, reserved
change, location, person, project, reason, batch), ``stock_levels`` (reorder
level per record) and the view ``stock`` (on hand, reserved, available per
item, all derived from the movements).

Modules: :mod:`.ledger` (items, balance checks, bulk posting),
:mod:`.operations` (receive, take, return, move, adjust, write off, reserve,
release: one transaction each), :mod:`.stockfile` (stock file import and count
reconciliation), :mod:`.queries` (lists, movement history, reservations,
:func:`available_stock` for selection), :mod:`.selection` (stocked-only
or stocked-first selection).
"""
from __future__ import annotations

from .ledger import CONDITIONS, KINDS, USABLE
from .operations import StockChange, adjust, move, receive, release, reserve, return_, take, write_off
from .queries import (available_stock, low_stock, recent_movements, reservations, stock_history, stock_list,
                      stock_value)
from .selection import STOCK_COLUMNS, STOCK_MODES, select_with_stock, stock_columns, stock_mode
from .stockfile import count_stock, import_stock, read_stock_files

__all__ = ["CONDITIONS", "KINDS", "USABLE", "StockChange", "receive", "take", "return_", "move", "adjust",
           "write_off", "reserve", "release", "available_stock", "low_stock", "recent_movements", "reservations",
           "stock_history", "stock_list", "stock_value", "STOCK_COLUMNS", "STOCK_MODES", "select_with_stock",
           "stock_columns",
           "stock_mode", "count_stock", "import_stock", "read_stock_files"]
