"""Selection meets the shelf: stock = only | prefer | ignore, stocked pairs, available and location."""
from __future__ import annotations

import pytest

from catalog.errors import InputError
from catalog.inventory import stock_columns
from tests.inventory.shelfdata import GEAR, HEAVY, LIGHT, MID


def order(sel):
    return sel.shortlist["candidate"].tolist()


def test_ignore_is_the_default_and_changes_nothing(shelf, envelope):
    shelf.stock_receive(HEAVY, 2, "Lab 2")
    plain = shelf.select(envelope())
    assert order(plain) == [LIGHT, MID, f"{LIGHT}+{GEAR}", f"{MID}+{GEAR}", HEAVY, f"{HEAVY}+{GEAR}"]  # by mass
    assert "available" not in plain.shortlist
    assert order(shelf.select(envelope('stock = "ignore"'))) == order(plain)


def test_prefer_ranks_stocked_first_then_the_rest(shelf, envelope):
    shelf.stock_receive(HEAVY, 2, "Lab 2 / cabinet A")
    shelf.stock_receive(GEAR, 1, "Store room")
    shelf.stock_receive(MID, 3, "Store room", condition="faulty")  # faulty: not stocked for selection
    sel = shelf.select(envelope('stock = "prefer"'))
    sl = sel.shortlist
    assert order(sel)[:2] == [HEAVY, f"{HEAVY}+{GEAR}"]              # tier 0: all on the shelf
    assert sl["stock_tier"].tolist() == sorted(sl["stock_tier"].tolist())
    assert sl["rank"].tolist() == list(range(1, len(sl) + 1))
    first = sl.iloc[0]
    assert (first["available"], first["location"]) == (2, "Lab 2 / cabinet A (2)")
    pair = sl.iloc[1]
    assert (pair["available"], pair["motor_available"], pair["gear_available"]) == (1, 2, 1)
    assert pair["location"] == "motor: Lab 2 / cabinet A (2) | gear: Store room (1)"
    light_pair = sl[sl["candidate"] == f"{LIGHT}+{GEAR}"].iloc[0]
    assert (light_pair["stock_tier"], light_pair["available"]) == (1, 0)  # only the gearhead is there
    assert set(sl.loc[sl["candidate"].isin([LIGHT, MID]), "stock_tier"]) == {2}
    assert len(sel.passing) == len(shelf.select(envelope()).passing)  # nothing is dropped


def test_only_keeps_stocked_motors_and_stocked_pairs(shelf, envelope):
    shelf.stock_receive(MID, 1, "Lab 2")
    shelf.stock_receive(GEAR, 2, "Lab 2")
    shelf.stock_receive(LIGHT, 1, "Lab 2")
    shelf.stock_reserve(LIGHT, 1, "winch")  # reserved: not available to this selection
    sel = shelf.select(envelope(), stock="only")
    assert sorted(order(sel)) == sorted([MID, f"{MID}+{GEAR}"])
    assert set(sel.shortlist["stock_tier"]) == {0} and sel.stock_mode == "only"
    assert sel.explain(MID).startswith(f"candidate {MID}")


def test_only_with_an_empty_shelf_says_so(shelf, envelope):
    with pytest.raises(InputError, match="no motor of the catalogue is in stock"):
        shelf.select(envelope('stock = "only"'))


def test_the_envelope_refuses_an_unknown_stock_mode(shelf, envelope):
    with pytest.raises(InputError) as info:
        shelf.select(envelope('stock = "sometimes"'))
    assert "ranking.stock" in str(info.value.problems[0]) and "prefer" in str(info.value.problems[0])
    with pytest.raises(InputError, match="stock 'maybe' is not allowed"):
        shelf.select(envelope(), stock="maybe")


def test_stock_columns_tiers():
    import pandas as pd

    stock = pd.DataFrame({"record_id": ["m1", "g1"], "available": [3, 1], "locations": ["A (3)", "B (1)"]})
    cols = stock_columns(["m1", "m1", "m2", "m1", "m2"], ["direct", "g1", "g1", "ratio-10.0", "direct"], ["g1"], stock)
    assert cols["stock_tier"].tolist() == [0, 0, 1, 1, 2]
    assert cols["available"].tolist() == [3, 1, 0, 0, 0]
    assert cols["gear_available"].tolist() == [-1, 1, 1, -1, -1]
