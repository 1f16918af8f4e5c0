"""Import of datasheet files into the store: shapes, SI values, provenance, rejection."""
from __future__ import annotations

import json

import numpy as np
import pytest
import scipy.constants as sc

from catalog.errors import ImportRejected, InputError
from tests.conftest import table_snapshot

# Reference factors computed independently of pint, from scipy.constants
# (CODATA / NIST SP 811 (2008) App. B.8 definitions: inch, pound, ounce, g_n exact).
OZF_IN = sc.ounce * sc.g * sc.inch  # ozf·in -> N·m
RPM = 2 * sc.pi / 60  # r/min -> rad/s
G_CM2 = 1e-3 * 1e-4  # g·cm² -> kg·m²
OZ_IN_S2 = OZF_IN  # ozf·in·s² -> kg·m²

CANONICAL = """
manufacturer,part_number,nominal_voltage [V],stall_torque [mNm],no_load_speed [rpm],rotor_inertia [g·cm²],terminal_resistance [Ohm],mass [g],commutation
Acme Test,M-1,24,350,5200,12.5,2.1,180,brushed
Acme Test,M-2,24,250,6100,8,3.3,120,brushless
Acme Test,M-3,12,500,4000,20,0.9,260,brushed
"""


def test_canonical_headers_with_units_store_si(cat, write):
    path = write("a.csv", CANONICAL)
    report = cat.import_([path])
    assert report.created == 3 and report.updated == 0
    m = cat.motors().set_index("id")
    # mN·m -> N·m (SI prefix, exact); r/min -> rad/s (NIST SP 811 B.8: pi/30); g·cm² -> kg·m² (exact)
    assert m.loc["acme-m-1", "stall_torque"] == pytest.approx(0.350, rel=1e-12)
    assert m.loc["acme-m-1", "no_load_speed"] == pytest.approx(5200 * RPM, rel=1e-12)
    assert m.loc["acme-m-1", "rotor_inertia"] == pytest.approx(12.5 * G_CM2, rel=1e-12)
    assert m.loc["acme-m-2", "mass"] == pytest.approx(0.120, rel=1e-12)
    assert m.loc["acme-m-2", "commutation"] == "brushless"


def test_units_in_cells_and_imperial(cat, write):
    path = write("b.csv", """
        manufacturer,part_number,stall_torque,no_load_speed,rotor_inertia,mass,diameter
        Imp Co,00341-12,12.5 oz-in,4200 rpm,0.0012 oz-in-s²,0.5 lb,1.5 in
        """)
    cat.import_([path])
    m = cat.motors().set_index("id")
    row = m.loc["imp-00341-12"]
    assert row["part_number"] == "00341-12"  # text, leading zero kept
    assert row["stall_torque"] == pytest.approx(12.5 * OZF_IN, rel=1e-9)
    assert row["no_load_speed"] == pytest.approx(4200 * RPM, rel=1e-9)
    assert row["rotor_inertia"] == pytest.approx(0.0012 * OZ_IN_S2, rel=1e-9)
    assert row["mass"] == pytest.approx(0.5 * sc.pound, rel=1e-9)
    assert row["diameter"] == pytest.approx(1.5 * sc.inch, rel=1e-9)


def test_raw_text_and_provenance_kept(cat, write):
    path = write("b.csv", """
        manufacturer,part_number,stall_torque
        Imp Co,X1,12.5 oz-in
        """)
    report = cat.import_([path])
    values = cat.show("imp-x1").values
    row = values.set_index("field").loc["stall_torque"]
    assert row["raw_text"] == "12.5 oz-in"
    assert row["origin"] == "given"
    assert row["source_file"] == str(path) and row["source_row"] == 2
    assert row["batch_id"] == report.batch_id


def test_mapping_profile(cat, write):
    mapping = write("sup.mapping.yaml", """
        profile: supplier-x
        record_type: motor
        columns:
          "Part #": {field: part_number}
          "Stall Torque (oz-in)": {field: stall_torque, unit: oz-in}
          "No Load Speed (RPM)": {field: no_load_speed, unit: RPM}
        constants:
          manufacturer: Supplier X
          resistance_reference_temperature: "20 degC"
        ignore: ["Colour"]
        """)
    data = write("sup.csv", """
        Part #,Stall Torque (oz-in),No Load Speed (RPM),Colour
        SX-1,10,3000,blue
        """)
    cat.import_([data], mapping=mapping)
    row = cat.motors().set_index("id").loc["supplier-sx-1"]
    assert row["stall_torque"] == pytest.approx(10 * OZF_IN, rel=1e-9)
    assert row["no_load_speed"] == pytest.approx(3000 * RPM, rel=1e-9)
    # 20 °C -> K: IEC/ISO definition T[K] = t[°C] + 273.15 (scipy.constants.zero_Celsius)
    assert row["resistance_reference_temperature"] == pytest.approx(20 + sc.zero_Celsius, rel=1e-12)


def test_mapping_profile_unknown_field_is_an_error(cat, write):
    mapping = write("bad.mapping.yaml", """
        profile: bad
        record_type: motor
        columns:
          "Part #": {field: part_numbr}
        """)
    data = write("sup.csv", "Part #\nX\n")
    with pytest.raises(InputError) as info:
        cat.import_([data], mapping=mapping)
    text = "\n".join(map(str, info.value.problems))
    assert "'part_numbr' is not a motor field (did you mean part_number?)" in text


def test_yaml_value_unit_mappings_and_gearheads(cat, write):
    path = write("g.yaml", """
        gearheads:
          - manufacturer: Gear Co
            part_number: P-14
            ratio: 14
            stages: 2
            efficiency: "81 %"
            max_continuous_torque: {value: 2.5, unit: N·m}
            max_input_speed: 8000 rpm
            inertia: {value: 0.9, unit: g·cm²}
        motors:
          - manufacturer: Gear Co
            part_number: M-1
            stall_torque: "1.2 N·m"
        """)
    cat.import_([path])
    g = cat.gearheads().set_index("id").loc["gear-p-14"]
    assert g["ratio"] == 14 and g["stages"] == 2
    assert g["efficiency"] == pytest.approx(0.81, rel=1e-12)
    assert g["max_continuous_torque"] == pytest.approx(2.5, rel=1e-12)
    assert g["inertia"] == pytest.approx(0.9e-7, rel=1e-12)
    assert cat.motors().set_index("id").loc["gear-m-1", "stall_torque"] == pytest.approx(1.2)


def test_json_records(cat, write):
    path = write("m.json", json.dumps([
        {"manufacturer": "J", "part_number": "1", "stall_torque": {"value": 5, "unit": "mNm"}},
    ]))
    cat.import_([path])
    assert cat.motors().iloc[0]["stall_torque"] == pytest.approx(0.005)


def test_xlsx_with_typed_sheet(cat, tmp_path):
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "gearheads"
    ws.append(["manufacturer", "part_number", "ratio", "max_continuous_torque [kgf·cm]"])
    ws.append(["X Gears", "00912", 27, 10.0])
    path = tmp_path / "g.xlsx"
    wb.save(path)
    cat.import_([path])
    g = cat.gearheads().set_index("id").loc["x-00912"]
    # kgf·cm -> N·m = g_n * 0.01 (NIST SP 811 B.8, exact from g_n = 9.80665 m/s²)
    assert g["max_continuous_torque"] == pytest.approx(10.0 * sc.g * 0.01, rel=1e-12)
    assert g["part_number"] == "00912"


def test_bad_file_leaves_catalogue_unchanged_and_lists_every_problem(cat, db, write):
    cat.import_([write("a.csv", CANONICAL)])
    before = table_snapshot(db)
    bad = write("bad.csv", """
        manufacturer,part_number,no_load_speed,stall_torque,max_efficiency
        B,1,12 N*m,1 N*m,0.8
        B,2,3000 rpm,"1,5 mNm",1.4
        B,3,3000 rpm,-2 mNm,0.5
        """)
    with pytest.raises(ImportRejected) as info:
        cat.import_([bad])
    lines = [str(p) for p in info.value.problems]
    assert any(line.startswith(f"{bad}:2:no_load_speed:") and "is a torque, expected a speed" in line for line in lines)
    assert any(line.startswith(f"{bad}:3:stall_torque:") and "decimal comma" in line for line in lines)
    assert any(line.startswith(f"{bad}:3:max_efficiency:") for line in lines)
    assert any(line.startswith(f"{bad}:4:stall_torque:") and "positive" in line for line in lines)
    assert table_snapshot(db) == before


def test_one_bad_file_rejects_the_whole_call(cat, db, write):
    good = write("good.csv", CANONICAL)
    bad = write("bad.csv", "manufacturer,part_number,stall_torque\nB,1,12 furlongs\n")
    with pytest.raises(ImportRejected):
        cat.import_([good, bad])
    assert table_snapshot(db).get("records", []) == []


def test_keep_valid_writes_rejects(cat, write, tmp_path):
    bad = write("bad.csv", """
        manufacturer,part_number,stall_torque
        B,1,10 mNm
        B,2,ten mNm
        """)
    rejects = tmp_path / "rejects.csv"
    report = cat.import_([bad], keep_valid=True, rejects=rejects)
    assert report.created == 1
    text = rejects.read_text(encoding="utf-8")
    assert "source_file,source_row,reasons" in text.splitlines()[0]
    assert ",3," in text and "ten mNm" in text


def test_reimport_updates_and_keeps_history(cat, db, write):
    cat.import_([write("a.csv", CANONICAL)])
    cat.import_([write("a2.csv", """
        manufacturer,part_number,stall_torque [mNm]
        Acme Test,M-1,360
        """)])
    m = cat.motors().set_index("id")
    assert len(m) == 3
    assert m.loc["acme-m-1", "stall_torque"] == pytest.approx(0.360)
    assert m.loc["acme-m-1", "no_load_speed"] == pytest.approx(5200 * RPM)  # untouched field kept
    hist = cat.sql("SELECT value_num, raw_text FROM value_history WHERE record_id = 'acme-m-1' "
                   "AND field = 'stall_torque'")
    assert list(hist["value_num"]) == [pytest.approx(0.350)]


@pytest.mark.parametrize("content, expected", [
    ("manufacturer,part_number,part_number\nA,1,2\n", "column 'part_number' appears twice"),
    ("manufacturer,part_number,stal_torque\nA,1,2\n", "unknown column 'stal_torque', expected a motor field (did you mean stall_torque"),
    ("manufacturer,part_number,stall_torque\nA,1,1 N*m\nA,1,2 N*m\n", "appears twice in this file (first at row 2)"),
    ("part_number,stall_torque\n1,2 N*m\n", "manufacturer: missing, expected a value"),
    ("manufacturer,part_number,stall_torque\nA,1,nan N*m\n", "stall_torque"),
    ("manufacturer,part_number,stall_torque\nA,1,12\n", "no unit"),
])
def test_bad_inputs_messages(cat, write, content, expected):
    with pytest.raises(ImportRejected) as info:
        cat.import_([write("x.csv", content)])
    assert expected in "\n".join(map(str, info.value.problems))


def test_validate_writes_nothing(cat, db, write):
    report = cat.validate([write("a.csv", CANONICAL)])
    assert report.ok and not db.exists()


def test_sql_lightest_24v_motors_with_stall_torque_over_0_3(cat, write):
    cat.import_([write("a.csv", CANONICAL)])
    df = cat.sql("SELECT id, mass FROM motors WHERE nominal_voltage = 24 AND stall_torque > 0.3 "
                 "ORDER BY mass")
    assert list(df["id"]) == ["acme-m-1"]


def test_sql_is_read_only(cat, write):
    cat.import_([write("a.csv", CANONICAL)])
    with pytest.raises(InputError):
        cat.sql("DELETE FROM records")
    assert len(cat.motors()) == 3


def test_motors_view_has_one_column_per_field(cat, write):
    from catalog.fields import field_names

    cat.import_([write("a.csv", CANONICAL)])
    assert list(cat.motors().columns) == field_names("motor")
    assert np.isnan(cat.motors()["terminal_inductance"]).all()


def test_sql_cannot_touch_other_files(cat, write, tmp_path):
    cat.import_([write("a.csv", CANONICAL)])
    target = tmp_path / "leak.csv"
    with pytest.raises(InputError):
        cat.sql(f"COPY (SELECT * FROM motors) TO '{target}'")
    assert not target.exists()
    other = write("other.csv", "a,b\n1,2\n")
    with pytest.raises(InputError):
        cat.sql(f"SELECT * FROM read_csv('{other}')")


def test_an_excel_date_in_a_number_column_says_date(tmp_path):
    """A cell a spreadsheet turned into a date is reported as a date, not as an unknown unit."""
    import datetime

    import openpyxl

    import catalog

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "motors"
    ws.append(["manufacturer", "part_number", "nominal_voltage [V]", "stall_torque [mN*m]"])
    ws.append(["Datecheck", "D-1", 12, datetime.datetime(2024, 5, 1)])
    ws["D2"].number_format = "yyyy-mm-dd"
    path = tmp_path / "dated.xlsx"
    wb.save(path)
    report = catalog.open(tmp_path / "c.duckdb").validate([path])
    assert [str(p) for p in report.problems] == [
        f"{path}[motors]:2:stall_torque: '2024-05-01' is a date, expected a torque such as mN*m or oz-in: a spreadsheet "
        "may have turned the cell into a date; format the column as numbers or text and type the value again"]
