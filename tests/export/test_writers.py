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


@pytest.mark.parametrize("value, digits, fmt", [
    (0.5, 3, "0.000"),          # a drive drop of 0.5 V shows 0.500, never 1
    (0.45, 3, "0.000"),         # 0.45 mH shows 0.450, never 0
    (7.33, 3, "0.00"),          # 7.33 mV/rpm, never 7
    (0.00045, 3, "0.000000"),   # 0.00045 H in SI: 0.000450
    (350.0, 3, "0"),
    (3470.0, 3, "0"),           # a whole number shows all its digits
    (12.5, 3, "0.0"),
    (0.4500, 4, "0.0000"),      # four where the datasheet gave four
    (9.996, 3, "0.0"),          # rounds up to 10.0: the decimals of the rounded value
    (-0.0125, 3, "0.0000"),
    (1e-5, 3, "0.00E+00"),
    (2.5e9, 4, "0.000E+00"),
    (0.0, 3, "0"),
    (None, 3, "0"),
])
def test_number_format_keeps_significant_digits(value, digits, fmt):
    assert number_format(value, digits) == fmt
    if value:
        shown = _excel_fixed(value, fmt)
        assert shown == pytest.approx(value, rel=0.51 * 10 ** (1 - digits))


def _excel_fixed(value, fmt):
    """What a spreadsheet shows for ``value`` in ``fmt`` (fixed or scientific), read back as a number."""
    if "E" in fmt:
        return float(f"{value:.{len(fmt.split('.')[1].split('E')[0])}e}")
    return float(f"{value:.{len(fmt.split('.')[1]) if '.' in fmt else 0}f}")


def test_number_format_integer():
    assert number_format(4, integer=True) == "0"


@pytest.mark.parametrize("text, n", [("0.4500 mH", 4), ("7.33", 3), ("0.00045", 2), ("1200", 2),
                                     ("1.20e3", 3), ("-3953 rpm", 4), (".5", 1), ("mH", None), (None, None)])
def test_significant_digits_of_datasheet_text(text, n):
    from catalog.export.columns import significant_digits

    assert significant_digits(text) == n


def test_given_digits_at_least_three():
    from catalog.export.columns import given_digits

    assert given_digits("0.5") == 3 and given_digits("8.002") == 4 and given_digits("3.14159265") == 6
    assert given_digits(None) == 3


def test_price_headed_by_its_currency():
    import pandas as pd

    one = table_from_frame(pd.DataFrame({"id": ["a", "b"], "price": [12.5, 3.0], "currency": ["EUR", "EUR"]}),
                           "x", record_type="motor")
    assert one.column("price").header == "price [EUR]"
    mixed = table_from_frame(pd.DataFrame({"id": ["a", "b", "c"], "price": [12.5, 3.0, 7.0],
                                           "currency": ["EUR", "USD", None]}), "x", record_type="motor")
    heads = [c.header for c in mixed.columns]
    assert heads == ["id", "price [EUR]", "price [USD]", "price [currency not given]", "currency"]
    assert mixed.column("price_EUR").values == [12.5, None, None]
    assert mixed.column("price_USD").values == [None, 3.0, None]
    assert mixed.column("price_unknown").values == [None, None, 7.0]
    assert mixed.units["price_USD"] == "USD"
    assert all("[currency]" not in h for h in heads)


def test_back_emf_si_unit_is_volt_second_per_radian():
    import pandas as pd

    df = pd.DataFrame({"id": ["a"], "back_emf_constant": [0.007], "torque_constant": [0.007]})
    si = table_from_frame(df, "x", "si", record_type="motor")
    assert si.column("back_emf_constant").header == "back_emf_constant [V·s/rad]"
    assert si.column("torque_constant").header == "torque_constant [N·m/A]"
    metric = table_from_frame(df, "x", "metric", record_type="motor")
    assert metric.column("back_emf_constant").si_header == "back_emf_constant [V·s/rad]"
    # 0.007 V·s/rad = 0.007 · 2π/60 V/rpm = 0.733 mV/rpm (1 rpm = 2π/60 rad/s, NIST SP 811 B.8)
    assert metric.column("back_emf_constant").values[0] == pytest.approx(0.007 * 2 * 3.141592653589793 / 60 * 1e3)


def test_units_by_magnitude_where_the_habit_makes_nonsense():
    load_inertia = quantity_column("inertia", [0.347, 1e-4], "inertia", "metric")
    # 0.347 kg·m² = 3 470 000 g·cm² = 3470 kg·cm² (1 kg·cm² = 1e-4 kg·m², NIST SP 811 B.8)
    assert load_inertia.unit == "kg·cm²" and load_inertia.values == [3470.0, 1.0]
    gear_out = quantity_column("torque", [400.0, 55.0], "torque", "metric")
    assert gear_out.unit == "N·m" and gear_out.values == [400.0, 55.0]
    rotor = quantity_column("rotor_inertia", [1.2e-6], "inertia", "metric")
    assert rotor.unit == "g·cm²" and rotor.values == [12.0]
    small = quantity_column("stall_torque", [0.35, 0.0125], "torque", "metric")
    assert small.unit == "mN·m"
    big_imperial = quantity_column("torque", [400.0], "torque", "imperial")
    # 400 N·m / 0.112984829 N·m per lbf·in = 3540 lbf·in (1 lbf·in = 0.112984829 N·m, NIST SP 811 B.8)
    assert big_imperial.unit == "lbf·in" and big_imperial.values[0] == pytest.approx(3540.3, rel=1e-4)


def test_datasheet_is_the_older_name_of_metric():
    from catalog.units import preset_name, to_display

    assert preset_name("datasheet") == "metric"
    assert to_display([0.35], "torque", "datasheet")[1] == to_display([0.35], "torque", "metric")[1] == "mN·m"
    with pytest.raises(KeyError, match="unknown display preset"):
        preset_name("supplier")


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
    assert num.value == 350.0 and num.data_type == "n" and num.number_format == "0"
    assert ws["C3"].value == 12.5 and ws["C3"].number_format == "0.0"     # per cell, not per column
    assert ws["E3"].value == 4 and ws["E3"].number_format == "0"
    formula = ws["F2"]
    assert formula.value == "=1+2" and formula.data_type == "s" and formula.quotePrefix
    assert ws["F3"].value == "@SUM(A1:A2)" and ws["F3"].data_type == "s"
    assert ws.column_dimensions["A"].width >= len("m-00341-06")


def test_unknown_extension_is_an_input_error(tmp_path):
    from catalog.errors import InputError

    with pytest.raises(InputError, match="unknown file extension '.xls'"):
        write_tables_to_file([small_table()], tmp_path / "m.xls")
