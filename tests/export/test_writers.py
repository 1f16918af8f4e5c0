"""The writers on small hand-made tables: units in headers, cell types, formula text, formats."""
from __future__ import annotations

import csv
import json

import pytest

from catalog.export.columns import Table, quantity_column, table_from_frame, text_column
from catalog.export.writers import FORMULA_PREFIXES, neutralise, number_format, write_tables_to_file

TRAPS = ["=1+2", "+SUM(A1)", "-3+4", "@SUM(A1:A2)", "\tTAB", "plain"]


def small_table():
    return Table("motors", [
        text_column("id", ["m-00341-06", "m-007210", "m-3"]),
        text_column("part_number", ["00341-06", "007210", "1-2"]),
        quantity_column("stall_torque", [0.35, 0.0125, None], "torque", "datasheet"),
        quantity_column("no_load_speed", [104.71975511965977, 523.5987755982989, 0.0], "angular_speed", "datasheet"),
        quantity_column("pole_pairs", [1, 4, None], "count", integer=True),
        text_column("notes", ["=1+2", "@SUM(A1:A2)", "-3+4"]),
    ], freeze_columns=1)


def test_headers_carry_units_and_values_convert():
    t = small_table()
    assert [c.header for c in t.columns] == ["id", "part_number", "stall_torque [mN·m]", "no_load_speed [rpm]",
                                             "pole_pairs [1]", "notes"]
    assert t.column("stall_torque").values[:2] == [350.0, 12.5]
    assert t.column("no_load_speed").values[1] == pytest.approx(5000.0)   # 523.6 rad/s = 5000 rpm
    assert t.column("stall_torque").si[0] == 0.35


def test_frame_columns_from_schema_fields():
    import pandas as pd

    df = pd.DataFrame({"id": ["a"], "mass": [0.25], "max_winding_temperature": [428.15], "ratio": [3.7],
                       "price": [12.5], "commutation": ["brushed"]})
    t = table_from_frame(df, "x", "datasheet", record_type="motor")
    assert [c.header for c in t.columns] == ["id", "mass [g]", "max_winding_temperature [°C]", "ratio [1]",
                                             "price [currency]", "commutation"]
    assert t.column("max_winding_temperature").values == [155.0]
    imperial = table_from_frame(df, "x", "imperial", record_type="motor")
    assert imperial.column("mass").unit == "lb"
    si = table_from_frame(df, "x", "si", record_type="motor")
    assert si.column("mass").header == "mass [kg]" and si.column("max_winding_temperature").values == [428.15]


def test_neutralise():
    assert [neutralise(t) for t in TRAPS] == ["'=1+2", "'+SUM(A1)", "'-3+4", "'@SUM(A1:A2)", "'\tTAB", "plain"]
    assert set(FORMULA_PREFIXES) >= {"=", "+", "-", "@"}


def test_number_format():
    assert number_format([1, 2], integer=True) == "0"
    assert number_format([12.5, 350.0]) == "0.0"
    assert number_format([0.0125, 0.02]) == "0.00000"
    assert number_format([1e-5]) == "0.000E+00"
    assert number_format([None]) == "0.###"


def test_csv_is_rfc4180_utf8_numbers_plain(tmp_path):
    path = write_tables_to_file([small_table()], tmp_path / "m.csv")
    raw = path.read_bytes()
    assert not raw.startswith(b"\xef\xbb\xbf")
    assert raw.count(b"\r\n") == 4 and b"\n" not in raw.replace(b"\r\n", b"")
    rows = list(csv.reader(raw.decode("utf-8").splitlines()))
    assert rows[0][2] == "stall_torque [mN·m]"
    assert rows[1][:5] == ["m-00341-06", "00341-06", "350.0", "1000.0", "1"]
    assert rows[2][1] == "007210"                 # text as written, never re-typed
    assert rows[3][2] == "" and rows[3][4] == ""  # missing stays empty
    assert [r[5] for r in rows[1:]] == ["'=1+2", "'@SUM(A1:A2)", "'-3+4"]


def test_json_units_once(tmp_path):
    path = write_tables_to_file([small_table(), Table("other", [text_column("k", ["v"])])], tmp_path / "m.json",
                        about={"units": "datasheet"})
    doc = json.loads(path.read_text(encoding="utf-8"))
    assert doc["units"] == {"stall_torque": "mN·m", "no_load_speed": "rpm", "pole_pairs": "1"}
    assert doc["records"][0] == {"id": "m-00341-06", "part_number": "00341-06", "stall_torque": 350.0,
                                 "no_load_speed": 1000.0, "pole_pairs": 1, "notes": "=1+2"}
    assert doc["records"][2]["stall_torque"] is None
    assert doc["tables"]["other"]["records"] == [{"k": "v"}]
    assert doc["about"]["units"] == "datasheet"


def test_parquet_keeps_si_with_unit_metadata(tmp_path):
    import pyarrow.parquet as pq

    path = write_tables_to_file([small_table()], tmp_path / "m.parquet", about={"units": "si"})
    table = pq.read_table(path)
    assert table.column_names == ["id", "part_number", "stall_torque", "no_load_speed", "pole_pairs", "notes"]
    field = table.schema.field("stall_torque")
    assert field.metadata == {b"unit": "N·m".encode(), b"dimension": b"torque"}
    assert table.schema.field("no_load_speed").metadata[b"unit"] == "rad/s".encode()
    assert table.column("stall_torque").to_pylist() == [0.35, 0.0125, None]
    assert str(table.schema.field("pole_pairs").type) == "int64"
    assert table.column("part_number").to_pylist()[1] == "007210"
    assert json.loads(table.schema.metadata[b"motorshelf"])["units"] == "si"


def test_xlsx_cells_typed_text_safe(tmp_path):
    import openpyxl

    path = write_tables_to_file([small_table()], tmp_path / "m.xlsx", about={"units": "datasheet"})
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == ["motors", "about"]
    ws = wb["motors"]
    assert [c.value for c in ws[1]] == ["id", "part_number", "stall_torque [mN·m]", "no_load_speed [rpm]",
                                       "pole_pairs [1]", "notes"]
    assert ws.freeze_panes == "B2"
    assert ws.auto_filter.ref == "A1:F4"
    pn = ws["B3"]
    assert pn.value == "007210" and pn.data_type == "s" and pn.number_format == "@"
    num = ws["C2"]
    assert num.value == 350.0 and num.data_type == "n" and num.number_format == "0.0"
    assert ws["E3"].value == 4 and ws["E3"].number_format == "0"
    formula = ws["F2"]
    assert formula.value == "=1+2" and formula.data_type == "s" and formula.quotePrefix
    assert ws["F3"].value == "@SUM(A1:A2)" and ws["F3"].data_type == "s"
    assert ws.column_dimensions["A"].width >= len("m-00341-06")


def test_unknown_extension_is_an_input_error(tmp_path):
    from catalog.errors import InputError

    with pytest.raises(InputError, match="unknown file extension '.xls'"):
        write_tables_to_file([small_table()], tmp_path / "m.xls")
