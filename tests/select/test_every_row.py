"""A selection that reads every row at once (``every_row=True``, as the JSON API and ``select --out`` do)
gives the very table of one that decides its verdicts first and evaluates the rows read afterwards."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

QUERIES = Path(__file__).resolve().parents[2] / "queries"


def _same_table(a, b) -> list:
    """The columns of two selection tables that differ (by value, NaN equal to NaN, bit for bit)."""
    assert list(a.columns) == list(b.columns)
    differ = []
    for col in a.columns:
        x, y = a[col].to_numpy(), b[col].to_numpy()
        if x.dtype.kind == "f" and y.dtype.kind == "f":
            same = np.array_equal(x, y, equal_nan=True)
        else:
            same = len(x) == len(y) and all(u == v or (u != u and v != v) for u, v in zip(x, y))
        if not same:
            differ.append(col)
    return differ


@pytest.mark.parametrize("query", sorted(p.name for p in QUERIES.glob("*.toml")))
def test_every_row_at_once_is_the_same_selection(demo_catalog, query):
    lazy = demo_catalog.select(QUERIES / query)
    whole = demo_catalog.select(QUERIES / query, every_row=True)
    assert whole.counts == lazy.counts
    assert whole.reason_counts().to_dict() == lazy.reason_counts().to_dict()
    assert _same_table(whole.shortlist, lazy.shortlist) == []
    assert _same_table(whole.rejected, lazy.rejected) == []
    assert _same_table(whole.table, lazy.table) == []
    if lazy.shows_misses:
        assert _same_table(whole.misses(), lazy.misses()) == []


def test_more_candidates_than_the_limit_decide_the_verdicts_first(demo_catalog, monkeypatch):
    from catalog.select import result

    query = QUERIES / "lift_axis.toml"
    whole = demo_catalog.select(query, every_row=True)
    monkeypatch.setattr(result, "EVERY_ROW_MAX", 10)
    calls = []
    real = result.evaluate_all
    monkeypatch.setattr(result, "evaluate_all", lambda *a, **k: calls.append(1) or real(*a, **k))
    limited = demo_catalog.select(query, every_row=True)
    assert calls, "beyond EVERY_ROW_MAX the verdict pass runs"
    assert _same_table(limited.table, whole.table) == []


def test_the_shelf_reads_every_row_and_agrees(demo_catalog):
    stock = demo_catalog.stock_available()
    if not len(stock):
        pytest.skip("the demo catalogue has nothing on the shelf")
    from catalog.inventory import select_with_stock
    from catalog.select import select

    query = QUERIES / "drive_wheel.toml"
    m, g = demo_catalog.motors(), demo_catalog.gearheads()
    a = select_with_stock(m, g, query, stock, "prefer")
    plain = select(m, g, query)
    assert a.counts == plain.counts
    assert sorted(a.table["candidate"]) == sorted(plain.table["candidate"])
    by_id = plain.table.set_index("candidate")
    got = a.table.set_index("candidate").loc[by_id.index]
    assert list(got["reasons"]) == list(by_id["reasons"])
    assert np.array_equal(got["winding_temperature"].to_numpy(float), by_id["winding_temperature"].to_numpy(float),
                          equal_nan=True)
