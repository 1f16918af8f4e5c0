"""Stock files: import a whole shelf (CSV, YAML, XLSX), refuse a bad file whole, reconcile a count."""
from __future__ import annotations

from pathlib import Path

import pytest

from catalog.errors import ImportRejected, InputError
from tests.conftest import table_snapshot
from tests.inventory.shelfdata import GEAR, HEAVY, LIGHT, MID

ROOT = Path(__file__).resolve().parents[2]

SHELF = """\
manufacturer,part_number,quantity,location,condition,serial_numbers,notes,min_quantity
Shelf Test,HEAVY,3,Lab 2 / cabinet A,new,S1;S2;S3,sealed bag,2
shelf test, light ,2,Lab 2 / cabinet A,used,,,
Shelf Test,GH10,1,Store room,needs-testing,,found in a drawer,
"""


def stock(cat):
    df = cat.stock_list()
    return {(r.id, r.location, r.condition): r.on_hand for r in df.itertuples()}


def test_import_a_csv_shelf(shelf, write):
    rows, pieces, batch = shelf.stock_import(write("shelf.csv", SHELF), person="Ola")
    assert (rows, pieces) == (3, 6)
    assert stock(shelf) == {(HEAVY, "Lab 2 / cabinet A", "new"): 3, (LIGHT, "Lab 2 / cabinet A", "used"): 2,
                            (GEAR, "Store room", "needs-testing"): 1}
    heavy = shelf.stock_list(record_id=HEAVY).iloc[0]
    assert (heavy.serial_numbers, heavy.notes) == ("S1;S2;S3", "sealed bag")
    hist = shelf.stock_history(HEAVY)
    assert hist[["kind", "change", "person", "batch_id"]].values.tolist() == [["receive", 3, "Ola", batch]]
    assert shelf.sql("SELECT kind, files FROM batches WHERE batch_id = ?", [batch]).values.tolist() == \
        [["stock-import", str(write("shelf.csv", SHELF))]]
    shelf.stock_take(HEAVY, 2, person="Mira", project="p")
    assert shelf.stock_low()["id"].tolist() == [HEAVY]  # min_quantity 2 from the file


def test_import_yaml_and_xlsx(shelf, write, tmp_path):
    import openpyxl

    y = write("shelf.yaml", f"""
        - id: {HEAVY}
          quantity: 2
          location: Field kit
        - {{manufacturer: Shelf Test, part_number: MID, quantity: 1, location: Field kit, condition: faulty}}
        """)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["Part number", "Manufacturer", "Qty", "Location"])
    ws.append(["LIGHT", "Shelf Test", 4.0, "Lab 1"])
    x = tmp_path / "shelf.xlsx"
    wb.save(x)
    assert shelf.stock_import([y, x])[:2] == (3, 7)
    assert stock(shelf) == {(HEAVY, "Field kit", "new"): 2, (MID, "Field kit", "faulty"): 1,
                            (LIGHT, "Lab 1", "new"): 4}


def test_a_bad_stock_file_is_refused_whole(shelf, write):
    shelf.stock_receive(HEAVY, 1, "Lab 2 / cabinet A")
    before = table_snapshot(shelf.path)
    bad = write("bad.csv", """\
        manufacturer,part_number,quantity,location,condition,colour
        Shelf Test,HEAVY,2,Lab 2,new,red
        Shelf Test,HEVY,1,Lab 2,new,
        Shelf Test,LIGHT,two,Lab 2,broken,
        Shelf Test,MID,0,,used,
        Shelf Test,HEAVY,1,lab 2,new,
        """)
    with pytest.raises(ImportRejected) as info:
        shelf.stock_import(bad)
    got = [str(p) for p in info.value.problems]
    src = str(bad)
    assert got == [
        f"{src}:1:colour: unknown column; expected one of id, manufacturer, part_number, quantity, location, "
        "condition, serial_numbers, notes, min_quantity",
        f"{src}:3:part_number: no catalogue record 'HEVY' of 'Shelf Test' (close: HEAVY); import its datasheet first",
        f"{src}:4:condition: 'broken' is not allowed, expected one of new, used, needs-testing, faulty",
        f"{src}:4:quantity: 'two' is not a whole number, expected a count of pieces",
        f"{src}:5:location: missing, expected a value",
        f"{src}:5:quantity: 0 pieces, expected at least 1 to receive (a count file may list 0)",
        f"{src}:6:location: shelf-heavy at 'lab 2' (new) appears twice (first at {src}:2), expected once",
    ]
    assert info.value.message.endswith(f"nothing was imported, {shelf.path} is unchanged")
    assert table_snapshot(shelf.path) == before
    with pytest.raises(InputError) as info:
        shelf.stock_import(ROOT / "nope.csv")
    assert [str(p) for p in info.value.problems] == [f"{ROOT / 'nope.csv'}: no such file"]


def test_a_refused_stock_file_does_not_create_a_catalogue(tmp_path, write):
    import catalog

    cat = catalog.open(tmp_path / "none.duckdb")
    with pytest.raises(ImportRejected):
        cat.stock_import(write("shelf.csv", SHELF))
    assert not cat.path.exists()


COUNT = """\
id,quantity,location,condition
shelf-heavy,2,Lab 2 / cabinet A,new
shelf-mid,1,Lab 2 / cabinet A,new
shelf-light,0,Lab 2 / cabinet A,used
"""


def test_count_shows_the_differences_then_applies_them(shelf, write):
    shelf.stock_receive(HEAVY, 3, "Lab 2 / cabinet A")
    shelf.stock_receive(LIGHT, 1, "Lab 2 / cabinet A", condition="used")
    shelf.stock_receive(GEAR, 1, "Lab 2 / cabinet A")         # not in the count: not found
    shelf.stock_receive(GEAR, 5, "Store room")                # another location: out of scope
    path = write("count.csv", COUNT)
    before = table_snapshot(shelf.path)
    diff, applied, batch = shelf.stock_count(path)
    assert not applied and batch is None and table_snapshot(shelf.path) == before
    got = diff[["id", "condition", "recorded", "counted", "change", "finding"]].values.tolist()
    assert got == [[GEAR, "new", 1, 0, -1, "not found"], [HEAVY, "new", 3, 2, -1, "different"],
                   [LIGHT, "used", 1, 0, -1, "different"], [MID, "new", 0, 1, 1, "not recorded"]]
    kept, _, _ = shelf.stock_count(path, keep_unlisted=True)
    assert GEAR not in set(kept["id"])
    diff2, applied, batch = shelf.stock_count(path, apply=True, person="Ola")
    assert applied and diff2.drop(columns="item_id").equals(diff.drop(columns="item_id"))
    assert stock(shelf) == {(HEAVY, "Lab 2 / cabinet A", "new"): 2, (MID, "Lab 2 / cabinet A", "new"): 1,
                            (GEAR, "Store room", "new"): 5}
    adj = shelf.sql("SELECT kind, person FROM stock_movements WHERE batch_id = ?", [batch])
    assert adj["kind"].tolist() == ["adjust"] * 4 and set(adj["person"]) == {"Ola"}
    assert shelf.stock_count(path)[0].empty  # the shelf now matches


def test_a_count_below_what_is_reserved_is_refused(shelf, write):
    shelf.stock_receive(HEAVY, 3, "Lab 2 / cabinet A")
    shelf.stock_reserve(HEAVY, 3, "winch")
    before = table_snapshot(shelf.path)
    with pytest.raises(ImportRejected) as info:
        shelf.stock_count(write("count.csv", COUNT), apply=True)
    assert "shelf-heavy at 'Lab 2 / cabinet A' (new): counted 2 but 3 reserved" in str(info.value.problems[0])
    assert table_snapshot(shelf.path) == before


def test_the_demo_shelf_file_matches_the_schema(tmp_path):
    import json

    from catalog.fields import load_schema
    from catalog.inventory.stockfile import STOCK_FIELDS

    schema = load_schema("stock")
    assert json.loads(json.dumps(schema))["properties"] == STOCK_FIELDS
    header = (ROOT / "sample_catalog/stock/shelf.csv").read_text(encoding="utf-8").splitlines()[0].split(",")
    assert set(header) <= set(STOCK_FIELDS)


# -- the same file twice, faulty pieces, stock value ---------------------------------------------
def test_the_same_content_twice_is_refused_unless_again(shelf, write, tmp_path):
    from click.testing import CliRunner

    from catalog.cli import cli

    first = write("shelf.csv", SHELF)
    _, _, batch = shelf.stock_import(first, person="Ola")
    before = table_snapshot(shelf.path)
    copy = tmp_path / "renamed-copy.csv"
    copy.write_bytes(first.read_bytes())
    for path in (first, copy):                     # by content, whatever the file is called
        with pytest.raises(ImportRejected) as exc:
            shelf.stock_import(path)
        (problem,) = exc.value.problems
        assert str(problem).startswith(f"{path}: already received in batch {batch} on ")
        assert f"(as {first})" in str(problem) and "--again" in str(problem)
    assert table_snapshot(shelf.path) == before    # nothing received twice
    r = CliRunner().invoke(cli, ["--db", str(shelf.path), "stock", "import", str(copy)])
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert f"error: {copy}: already received in batch {batch}" in r.output
    assert table_snapshot(shelf.path) == before
    r = CliRunner().invoke(cli, ["--db", str(shelf.path), "stock", "import", str(copy), "--again"])
    assert r.exit_code == 0, r.output
    assert stock(shelf)[(HEAVY, "Lab 2 / cabinet A", "new")] == 6     # received twice on purpose


def test_the_same_content_twice_in_one_import(shelf, write, tmp_path):
    one = write("a.csv", SHELF)
    two = tmp_path / "b.csv"
    two.write_bytes(one.read_bytes())
    before = table_snapshot(shelf.path)
    with pytest.raises(ImportRejected) as exc:
        shelf.stock_import([one, two])
    assert f"{two}: the same content as {one} in this import, expected each shelf once" in \
        [str(p) for p in exc.value.problems]
    assert table_snapshot(shelf.path) == before
    assert shelf.stock_import(write("c.csv", SHELF.replace("Store room", "Store room 2")))[:2] == (3, 6)


def test_faulty_pieces_are_never_available(shelf, write):
    shelf.stock_import(write("s.yaml", f"""
        - {{id: {HEAVY}, quantity: 2, location: Lab 1, condition: faulty}}
        - {{id: {HEAVY}, quantity: 3, location: Lab 1, condition: used}}
        """))
    listed = {r.condition: (r.on_hand, r.available) for r in shelf.stock_list().itertuples()}
    assert listed == {"faulty": (2, 0), "used": (3, 3)}
    # the same answer as --low and selection give: 3 usable pieces
    assert shelf.stock_available().set_index("record_id").loc[HEAVY, "available"] == 3


MOTOR_PRICES = """\
manufacturer,part_number,commutation,price,currency
Shelf Test,HEAVY,brushed,120.50,EUR
Shelf Test,LIGHT,brushed,80,USD
"""
GEAR_PRICES = """\
manufacturer,part_number,ratio,price,currency
Shelf Test,GH10,10,15.25,EUR
"""


def test_stock_value_per_location_and_in_total(shelf, write, tmp_path):
    from click.testing import CliRunner

    from catalog.cli import cli

    shelf.import_([write("prices.csv", MOTOR_PRICES), write("gear-prices.csv", GEAR_PRICES)])
    assert shelf.motors().set_index("id").loc[HEAVY, "mass"] == 0.5     # the other values stay
    shelf.stock_import(write("s.yaml", f"""
        - {{id: {HEAVY}, quantity: 2, location: Lab 1}}
        - {{id: {HEAVY}, quantity: 1, location: Lab 1, condition: faulty}}
        - {{id: {GEAR}, quantity: 4, location: Lab 1}}
        - {{id: {LIGHT}, quantity: 3, location: Store}}
        - {{id: {MID}, quantity: 5, location: Store}}
        """))
    items = shelf.stock_list().set_index(["id", "condition"])
    assert items.loc[(HEAVY, "new"), "value"] == pytest.approx(241.0)
    assert items.loc[(HEAVY, "faulty"), "value"] == 0.0          # faulty pieces are not valued
    assert items.loc[(LIGHT, "new"), ["unit_price", "currency"]].tolist() == [80.0, "USD"]
    v = shelf.stock_value()
    per = {(r.location, r.currency): (r.pieces, r.value, r.unpriced)
           for r in v[v["scope"] == "location"].itertuples() if r.currency == r.currency}
    assert per == {("Lab 1", "EUR"): (6, pytest.approx(2 * 120.50 + 4 * 15.25), 0),
                   ("Store", "USD"): (3, pytest.approx(240.0), 0)}
    totals = v[v["scope"] == "total"]
    assert dict(zip(totals["currency"].fillna("-"), totals["value"].fillna(0))) == {
        "EUR": pytest.approx(302.0), "USD": pytest.approx(240.0), "-": 0}
    assert int(totals["unpriced"].sum()) == 5                     # MID has no catalogue price
    out = CliRunner().invoke(cli, ["--db", str(shelf.path), "stock", "list"]).output
    assert "value on hand at catalogue prices (faulty pieces not valued):" in out
    assert "  Lab 1  302.00 EUR" in out and "  Store  240.00 USD" in out
    assert "  total  302.00 EUR + 240.00 USD" in out
    assert "5 piece(s) without a catalogue price are not in these sums" in out
    # the export: the items with their value, and the value per location and in total
    import openpyxl

    path = tmp_path / "stock.xlsx"
    r = CliRunner().invoke(cli, ["--db", str(shelf.path), "export", "stock", "--out", str(path)])
    assert r.exit_code == 0 and "5 stock items written" in r.output
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == ["stock", "stock value", "about"]
    head = [c.value for c in wb["stock"][1]]
    assert {"value [EUR]", "value [USD]", "unit_price [EUR]", "available [1]", "currency"} <= set(head)
    vrows = [dict(zip([c.value for c in wb["stock value"][1]], (c.value for c in row)))
             for row in wb["stock value"].iter_rows(min_row=2)]
    total_eur = [r for r in vrows if r["scope"] == "total" and r["currency"] == "EUR"]
    assert total_eur[0]["value [EUR]"] == pytest.approx(302.0)
