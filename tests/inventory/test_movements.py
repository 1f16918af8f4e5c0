"""Stock movements: quantities derived from the append-only ledger, refusals, reservations, migration."""
from __future__ import annotations

import datetime as dt

import pytest

from catalog.errors import InputError, NotFound

from tests.conftest import table_snapshot
from tests.inventory.shelfdata import GEAR, HEAVY, LIGHT

A, B = "Lab 2 / cabinet A", "Store room / rack C"


def items(cat, record_id):
    df = cat.stock_list(record_id=record_id, include_empty=True)
    return {(r.location, r.condition): (r.on_hand, r.reserved, r.available) for r in df.itertuples()}


def ledger_sum(cat, record_id):
    return cat.sql("SELECT location, condition, sum(quantity_change)::INT AS q, sum(reserved_change)::INT AS r "
                   "FROM stock_movements WHERE record_id = ? GROUP BY ALL ORDER BY ALL", [record_id])


def test_every_movement_kind_and_the_quantity_is_the_sum_of_the_ledger(shelf):
    shelf.stock_receive(HEAVY, 5, A, serial_numbers="S1;S2", notes="spares", person="Mira")
    shelf.stock_take(HEAVY, 2, person="Mira", project="rover", serial_numbers="S1")
    shelf.stock_return(HEAVY, 1, A, condition="used", person="Mira", project="rover")
    shelf.stock_move(HEAVY, 2, B, from_location=A, condition="new", person="Jonas")
    shelf.stock_adjust(HEAVY, 1, location=B, person="Ola", reason="count")
    shelf.stock_write_off(HEAVY, 1, "burnt", location=A, condition="used")
    assert items(shelf, HEAVY) == {(A, "new"): (1, 0, 1), (A, "used"): (0, 0, 0), (B, "new"): (1, 0, 1)}
    sums = ledger_sum(shelf, HEAVY)
    assert {(r.location, r.condition): r.q for r in sums.itertuples()} == {(A, "new"): 1, (A, "used"): 0, (B, "new"): 1}
    hist = shelf.stock_history(HEAVY)
    assert list(hist["kind"]) == ["receive", "take", "return", "move-out", "move-in", "adjust", "write-off"]
    assert list(hist["change"]) == [5, -2, 1, -2, 2, -1, -1]
    assert list(hist["on_hand_after"]) == [5, 3, 1, 1, 2, 1, 0]
    take = hist.iloc[1]
    assert (take.person, take.project, take.serial_numbers) == ("Mira", "rover", "S1")
    lst = shelf.stock_list(record_id=HEAVY, location="cabinet a")
    assert lst.loc[lst["condition"] == "new", "serial_numbers"].item() == "S2"


def test_a_movement_below_zero_is_refused_and_nothing_changes(shelf):
    shelf.stock_receive(LIGHT, 2, A)
    before = table_snapshot(shelf.path)
    with pytest.raises(InputError, match=r"cannot take 3 x shelf-light from 'Lab 2 / cabinet A' \(new\): "
                                         r"2 available \(2 on hand\); nothing was changed"):
        shelf.stock_take(LIGHT, 3, person="Mira", project="rover")
    with pytest.raises(InputError, match="cannot write off 5"):
        shelf.stock_write_off(LIGHT, 5, "lost")
    with pytest.raises(InputError, match="cannot move 3"):
        shelf.stock_move(LIGHT, 3, B)
    with pytest.raises(InputError, match="is too small, expected at least 1"):
        shelf.stock_receive(LIGHT, 0, A)
    with pytest.raises(InputError, match="not a whole number"):
        shelf.stock_receive(LIGHT, "2.5", A)
    with pytest.raises(NotFound, match="no record with id 'shelf-lite'; did you mean shelf-light"):
        shelf.stock_receive("shelf-lite", 1, A)
    with pytest.raises(InputError, match="condition 'broken' is not allowed"):
        shelf.stock_receive(LIGHT, 1, A, condition="broken")
    with pytest.raises(InputError, match="take needs who takes"):
        shelf.stock_take(LIGHT, 1)
    assert table_snapshot(shelf.path) == before


def test_the_ledger_guard_refuses_what_the_friendly_checks_let_through(shelf):
    from catalog.inventory.ledger import post

    shelf.stock_receive(LIGHT, 1, A)
    item = shelf.stock_list(record_id=LIGHT)["location"].item()
    item_id = int(shelf.sql("SELECT item_id FROM stock_items WHERE record_id = ?", [LIGHT])["item_id"].item())
    with shelf.store.write() as con, pytest.raises(InputError, match="would leave -1 on hand"):
        post(con, 0, [{"item_id": item_id, "record_id": LIGHT, "location": item, "condition": "new",
                       "kind": "take", "quantity_change": -2}])
    assert items(shelf, LIGHT)[(A, "new")] == (1, 0, 1)


def test_which_item_is_meant(shelf):
    shelf.stock_receive(LIGHT, 2, A)
    shelf.stock_receive(LIGHT, 1, B, condition="faulty")
    shelf.stock_take(LIGHT, 1, person="Mira", project="p")  # faulty pieces are not taken without asking
    shelf.stock_receive(LIGHT, 1, "  store ROOM /  rack c ")  # same place, other case and spaces
    assert items(shelf, LIGHT)[(B, "new")] == (1, 0, 1)
    with pytest.raises(InputError, match="stocked in 3 places, give --location"):
        shelf.stock_move(LIGHT, 1, "Field kit")
    with pytest.raises(InputError, match="none at 'Nowhere'"):
        shelf.stock_take(LIGHT, 1, location="Nowhere", person="a", project="b")
    shelf.stock_take(LIGHT, 1, location=B, condition="faulty", person="Tamsin", project="teardown")
    with pytest.raises(InputError, match="nothing of it is in stock"):
        shelf.stock_take(GEAR, 1, person="a", project="b")


def test_reservations_hold_pieces_and_turn_into_takes(shelf):
    shelf.stock_receive(HEAVY, 3, A)
    r1 = shelf.stock_reserve(HEAVY, 2, "winch", person="Jonas")
    assert r1.reservation_id == 1 and items(shelf, HEAVY)[(A, "new")] == (3, 2, 1)
    with pytest.raises(InputError, match=r"1 available \(3 on hand, 2 reserved for others\)"):
        shelf.stock_take(HEAVY, 2, person="Mira", project="rover")
    with pytest.raises(InputError, match="reserved pieces cannot be"):
        shelf.stock_adjust(HEAVY, 1, location=A)
    shelf.stock_take(HEAVY, 1, person="Mira", project="rover")  # the free one
    t = shelf.stock_take(reservation=1, quantity=1)
    assert "for project winch on reservation 1 by Jonas" in t.message
    assert items(shelf, HEAVY)[(A, "new")] == (1, 1, 0)
    open_ = shelf.stock_reservations()
    assert open_[["reservation_id", "reserved", "left", "project"]].values.tolist() == [[1, 2, 1, "winch"]]
    shelf.stock_release(1, reason="winch postponed")
    assert items(shelf, HEAVY)[(A, "new")] == (1, 0, 1)
    assert shelf.stock_reservations().empty
    assert shelf.stock_reservations(open_only=False)["left"].tolist() == [0]
    with pytest.raises(InputError, match="reservation 1 .* is closed: already released"):
        shelf.stock_take(reservation=1)
    with pytest.raises(InputError, match="no reservation 7"):
        shelf.stock_release(7)
    r2 = shelf.stock_reserve(HEAVY, 1, "rover")
    shelf.stock_take(reservation=r2.reservation_id)
    with pytest.raises(InputError, match="already taken"):
        shelf.stock_release(r2.reservation_id)


def test_move_can_reclassify_and_low_stock_uses_the_reorder_level(shelf):
    shelf.stock_receive(HEAVY, 2, A, condition="needs-testing", min_quantity=2)
    assert shelf.stock_low()["id"].tolist() == []  # needs-testing pieces count as usable
    shelf.stock_move(HEAVY, 1, A, to_condition="faulty", reason="tested: shorted")
    low = shelf.stock_low()
    assert low[["id", "usable_available", "min_quantity"]].values.tolist() == [[HEAVY, 1, 2]]
    with pytest.raises(InputError, match="source and destination are both"):
        shelf.stock_move(HEAVY, 1, A, condition="faulty")


def test_back_dated_movements_keep_their_time(shelf):
    when = dt.datetime(2024, 3, 1, 9, 30)
    shelf.stock_receive(LIGHT, 1, A, at=when)
    assert shelf.stock_history(LIGHT)["moved_at"].tolist() == [when]


def test_a_version_1_file_migrates_on_open(tmp_path):
    import duckdb

    import catalog
    from catalog.store import SCHEMA_VERSION
    from catalog.store.schema import MIGRATIONS

    db = tmp_path / "v1.duckdb"
    con = duckdb.connect(str(db))
    for stmt in MIGRATIONS[1]:
        con.execute(stmt)
    con.execute("INSERT INTO schema_version (version) VALUES (1)")
    con.execute("INSERT INTO batches VALUES (nextval('batch_seq'), 'import', now(), 'x.csv', '', '')")
    con.execute("INSERT INTO records VALUES ('old-m1', 'motor', 'Old', 'M1', 1, 1)")
    con.close()
    cat = catalog.open(db)
    assert cat.stock_list().empty  # a read migrates
    cat.stock_receive("old-m1", 2, A)
    assert cat.sql("SELECT max(version) AS v FROM schema_version")["v"].item() == SCHEMA_VERSION >= 2
    assert cat.stock_available()[["record_id", "available"]].values.tolist() == [["old-m1", 2]]
