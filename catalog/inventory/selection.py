"""Selection meets the shelf: consider only stocked parts, or rank them first.

The envelope says how (``[ranking] stock = "only" | "prefer" | "ignore"``,
default ignore); ``Catalog.select(..., stock=...)`` and ``motorshelf select
--stock`` override it.  Stock comes from :func:`catalog.inventory.available_stock`
(usable pieces, faulty left out, reserved ones subtracted).

Every candidate gets a stock tier: 0 when all of it is on the shelf (a stocked
motor driving directly, or a stocked motor with a stocked gearhead: a stocked
pair), 1 when part of it is (the motor or the gearhead, or a stocked motor with
an assumed gear that must be bought), 2 when nothing is.  ``only`` keeps tier 0
(stocked motors and gearheads, no assumed gears); ``prefer`` ranks by tier first
and by the envelope's keys within a tier.  The shortlist gains ``available``
(complete sets on the shelf), ``location``, ``motor_available``,
``gear_available`` and ``stock_tier``.
"""
from __future__ import annotations

__all__ = ["STOCK_MODES", "STOCK_COLUMNS", "stock_mode", "stock_columns", "select_with_stock"]

import dataclasses

from ..errors import InputError

STOCK_MODES = ("ignore", "prefer", "only")
STOCK_COLUMNS = ["available", "location", "motor_available", "gear_available", "stock_tier"]


def stock_mode(envelope, override: str | None = None) -> str:
    """The stock mode: ``override`` if given, else the envelope's ``ranking.stock``, else ignore."""
    mode = override
    if mode is None:
        raw = getattr(envelope, "raw", None) or {}
        mode = (raw.get("ranking") or {}).get("stock", "ignore")
    mode = str(mode).strip().lower()
    if mode not in STOCK_MODES:
        raise InputError(f"stock {mode!r} is not allowed, expected one of {', '.join(STOCK_MODES)}")
    return mode


def stock_columns(motor, gear, gear_ids, stock):
    """Stock columns for candidates given by their ``motor`` and ``gear`` ids.

    ``gear_ids`` are the catalogue gearhead ids (any other gear is direct drive or an
    assumed gear); ``stock`` is the frame of :func:`available_stock`.
    """
    import numpy as np
    import pandas as pd

    avail = dict(zip(stock["record_id"], stock["available"].astype(int)))
    where = dict(zip(stock["record_id"], stock["locations"]))
    motor = pd.Series(motor, dtype=object).reset_index(drop=True)
    gear = pd.Series(gear, dtype=object).reset_index(drop=True)
    is_gearhead = gear.isin(set(gear_ids)).to_numpy()
    is_direct = (gear == "direct").to_numpy() & ~is_gearhead
    m_av = motor.map(avail).fillna(0).astype(int).to_numpy()
    g_av = np.where(is_gearhead, gear.map(avail).fillna(0).astype(int).to_numpy(), 0)
    m_ok, g_ok = m_av > 0, g_av > 0
    tier = np.where(is_direct, np.where(m_ok, 0, 2),
                    np.where(is_gearhead, 2 - m_ok.astype(int) - g_ok.astype(int), np.where(m_ok, 1, 2)))
    sets = np.where(is_direct, m_av, np.where(is_gearhead, np.minimum(m_av, g_av), 0))
    m_loc = motor.map(where).fillna("")
    g_loc = gear.map(where).fillna("")
    location = np.where(is_gearhead & (g_loc != ""),
                        np.where(m_loc != "", "motor: " + m_loc + " | gear: " + g_loc, "gear: " + g_loc),
                        m_loc)
    return pd.DataFrame({"available": sets, "location": location, "motor_available": m_av,
                         "gear_available": np.where(is_gearhead, g_av, -1), "stock_tier": tier})


def select_with_stock(motors, gearheads, envelope, stock, mode: str | None = None, top: int | None = None,
                      motor_notes: dict | None = None, catalog=None, every_row: bool = False):
    """:func:`catalog.select.select` with the shelf taken into account; returns a Selection.

    ``gear_available`` is -1 for candidates without a catalogue gearhead.  ``every_row`` as for
    :func:`~catalog.select.select` (taking the shelf into account reads every row anyway).
    """
    import numpy as np
    import pandas as pd

    from ..select import Selection, load_envelope, select

    env = load_envelope(envelope)
    mode = stock_mode(env, mode)
    if mode == "ignore":
        return select(motors, gearheads, env, top=top, motor_notes=motor_notes, catalog=catalog, every_row=every_row)
    if mode == "only":
        stocked = set(stock["record_id"])
        motors = motors[motors["id"].isin(stocked)]
        gearheads = gearheads[gearheads["id"].isin(stocked)]
        if motors.empty:
            raise InputError("stock = 'only', but no motor of the catalogue is in stock (usable and not "
                             "reserved); `motorshelf stock list` shows the shelf")
        env = dataclasses.replace(env, ratios=[])  # an assumed gear is never on the shelf
    sel = select(motors, gearheads, env, top=top, motor_notes=motor_notes, every_row=True)   # the whole table is read
    table = sel.table.reset_index(drop=True)
    cols = stock_columns(table["motor"], table["gear"], gearheads["id"], stock)
    table = pd.concat([table.drop(columns=[c for c in STOCK_COLUMNS if c in table]), cols], axis=1)
    if mode == "prefer" and "rank" in table:
        passing = table[table["passed"]].sort_values(["stock_tier", "rank"], kind="mergesort")
        table = pd.concat([passing.assign(rank=np.arange(1, len(passing) + 1, dtype=float)),
                           table[~table["passed"]]]).reset_index(drop=True)
    return Selection(sel.envelope, sel.candidates, table, env.top if top is None else int(top), catalog=catalog,
                     stock_mode=mode, extra_columns=STOCK_COLUMNS)
