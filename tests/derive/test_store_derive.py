"""Derivation inside the catalogue file: provenance rows, idempotence, re-imports, CLI."""
from __future__ import annotations

import re

import pandas as pd
import pytest
import yaml
from click.testing import CliRunner

import catalog
from catalog.cli import cli
from catalog.demo import SAMPLE, build
from catalog.derive import EQUATIONS
from catalog.ingest.importer import default_id

HEAD = ("manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],"
        "torque_constant [mNm/A],no_load_current [mA],stall_current [A]\n")
# TA-1: consistent and under-determined; TA-2: stall current 20 A given where V/R = 12 A
CSV = HEAD + "Testwerk Antriebe,TA-1,24,2,20,50,\nTestwerk Antriebe,TA-2,12,1,15,40,20\n"
CONSISTENT = HEAD + "Testwerk Antriebe,TA-1,24,2,20,50,\n"

SOLVER = {(eq.name, s.output): s for eq in EQUATIONS for s in eq.solvers}
TREF_RELATION = "assumed datasheet reference temperature 25 °C"
VALUE_SQL = ("SELECT record_id, field, value_num, value_text, raw_text, raw_unit, origin, relation, "
             "inputs, source_file, source_row, batch_id FROM record_values ORDER BY record_id, field")


@pytest.fixture
def csv_file(write):
    return write("motors.csv", CSV)


def rows(cat, record_id=None):
    df = cat.sql(VALUE_SQL)
    if record_id is not None:
        df = df[df.record_id == record_id]
    return df.set_index("field", drop=False)


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


def test_derived_rows_carry_relation_and_inputs(cat, csv_file):
    report = cat.import_([csv_file])
    v = rows(cat, "testwerk-ta-1")
    given = v[v.origin == "given"]
    derived = v[v.origin == "derived"]
    assert set(given.field) == {"nominal_voltage", "terminal_resistance", "torque_constant", "no_load_current"}
    assert given.relation.isna().all() and given.inputs.isna().all()
    assert (given.source_file == str(csv_file)).all() and (given.source_row == 2).all()
    assert set(v.origin) == {"given", "derived"}
    # V R Kt I0 determine these (no thermal, inertia or inductance data in the file)
    assert set(derived.field) == {
        "stall_current", "stall_torque", "no_load_speed", "back_emf_constant", "speed_constant",
        "speed_torque_gradient", "friction_torque", "motor_constant", "max_efficiency",
        "max_output_power", "max_efficiency_current", "resistance_reference_temperature"}
    present = set(v.field)
    for row in derived.itertuples():
        assert row.batch_id == report.batch_id
        assert pd.isna(row.source_file) and pd.isna(row.raw_text) and pd.isna(row.source_row)
        if row.field == "resistance_reference_temperature":
            assert row.relation == TREF_RELATION and row.inputs == "" and row.value_num == 298.15
            continue
        solver = SOLVER[(row.relation, row.field)]  # the relation text names a solver for that field
        assert row.inputs == ", ".join(solver.inputs)
        assert set(row.inputs.split(", ")) <= present  # inputs are fields of the same record
    # values (exact arithmetic on exact SI inputs: 24/2, 0.02·(12 − 0.05), (24 − 2·0.05)/0.02)
    assert v.loc["stall_current", "value_num"] == 12.0
    assert v.loc["stall_current", "relation"] == "stall current = V/R"
    assert v.loc["stall_current", "inputs"] == "nominal_voltage, terminal_resistance"
    assert v.loc["stall_torque", "value_num"] == pytest.approx(0.02 * (12 - 0.05), rel=1e-12)
    assert v.loc["no_load_speed", "value_num"] == pytest.approx((24 - 2 * 0.05) / 0.02, rel=1e-12)
    assert report.derived == int((rows(cat).origin == "derived").sum())
    assert cat.summary()["derived_values"] == report.derived


def test_derive_twice_leaves_record_values_identical(cat, csv_file):
    cat.import_([csv_file])
    first = cat.derive()
    before = cat.sql(VALUE_SQL)
    flags_sql = "SELECT * EXCLUDE (batch_id) FROM flags ORDER BY record_id, relation"
    flags_before = cat.sql(flags_sql)
    second = cat.derive()
    after = cat.sql(VALUE_SQL)
    assert first.derived == second.derived > 0
    assert [str(f) for f in first.flags] == [str(f) for f in second.flags]
    assert before.equals(after)
    assert len(flags_before) == 1  # TA-2 over-determines V/R only
    assert flags_before.equals(cat.sql(flags_sql))


def test_reimport_with_new_given_value_recomputes_dependents(cat, write):
    first = cat.import_([write("a.csv", CONSISTENT)])
    assert rows(cat, "testwerk-ta-1").loc["stall_current", "value_num"] == 12.0
    second = cat.import_([write("b.csv", CONSISTENT.replace("24,2,20,50", "24,3,20,50"))])
    assert second.updated == 1 and second.created == 0
    v = rows(cat, "testwerk-ta-1")
    assert v.loc["terminal_resistance", "value_num"] == 3.0
    assert v.loc["stall_current", "value_num"] == 8.0  # 24 V / 3 Ω
    assert v.loc["stall_current", "batch_id"] == second.batch_id
    assert v.loc["max_output_power", "value_num"] == pytest.approx((24 - 3 * 0.05) ** 2 / 12, rel=1e-12)
    hist = cat.sql("SELECT field, value_num, origin, batch_id, replaced_by_batch FROM value_history "
                   "WHERE record_id = 'testwerk-ta-1'").set_index("field")
    assert hist.loc["terminal_resistance"].tolist() == [2.0, "given", first.batch_id, second.batch_id]
    assert hist.loc["stall_current"].tolist() == [12.0, "derived", first.batch_id, second.batch_id]


def test_partial_reimport_adds_a_given_value_and_derives_from_it(cat, write):
    cat.import_([write("a.csv", "manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm]\n"
                                     "Testwerk Antriebe,TA-1,24,2\n")])
    assert "no_load_speed" not in rows(cat, "testwerk-ta-1").index
    cat.import_([write("b.csv", "manufacturer,part_number,torque_constant [mNm/A],no_load_current [mA]\n"
                                     "Testwerk Antriebe,TA-1,20,50\n")])
    v = rows(cat, "testwerk-ta-1")
    assert v.loc["nominal_voltage", "origin"] == "given" and v.loc["nominal_voltage", "value_num"] == 24.0
    assert v.loc["no_load_speed", "value_num"] == pytest.approx(1195.0, rel=1e-12)


def test_given_value_is_never_overwritten(cat, csv_file, write):
    cat.import_([csv_file])
    for _ in range(2):  # after the import and after an explicit derive
        v = rows(cat, "testwerk-ta-2")
        row = v.loc["stall_current"]
        # V/R = 12 A, but the datasheet's 20 A stays, as given, with its provenance
        assert (row.value_num, row.origin, row.raw_text, row.source_row) == (20.0, "given", "20", 3)
        assert pd.isna(row.relation)
        cat.derive()
    # a value derived before becomes given (and wins) when a later file states it
    assert rows(cat, "testwerk-ta-1").loc["stall_torque", "origin"] == "derived"
    cat.import_([write("c.csv", "manufacturer,part_number,stall_torque [mNm]\nTestwerk Antriebe,TA-1,250\n")])
    cat.derive()
    row = rows(cat, "testwerk-ta-1").loc["stall_torque"]
    assert (row.value_num, row.origin) == (0.25, "given")
    assert (cat.sql(VALUE_SQL).groupby(["record_id", "field"]).size() == 1).all()  # one row per record and field


def test_cli_check_exit_codes_and_flag_line(tmp_path, write):
    good = tmp_path / "good.duckdb"
    catalog.open(good).import_([write("a.csv", CONSISTENT)])
    r = run("--db", good, "check")
    assert r.exit_code == 0, r.output
    assert r.output.strip() == "no flags above 10%"

    bad = tmp_path / "bad.duckdb"
    catalog.open(bad).import_([write("b.csv", CSV)])
    r = run("--db", bad, "check")
    assert r.exit_code == 1, r.output
    assert r.output.splitlines() == [
        "flag: testwerk-ta-2: stall current = V/R: stall_current given 20 A, the other values imply 12 A "
        "(+66.7%); given stall_current 20 A, nominal_voltage 12 V, terminal_resistance 1 Ω"]
    r = run("--db", bad, "check", "--tolerance", "0.7")  # 66.7 % is below 70 %
    assert r.exit_code == 0 and r.output.strip() == "no flags above 70%"


def test_cli_show_prints_derived_from_lines(tmp_path, write):
    db = tmp_path / "c.duckdb"
    catalog.open(db).import_([write("a.csv", CSV)])
    r = run("--db", db, "show", "testwerk-ta-1")
    assert r.exit_code == 0, r.output
    lines = r.output.splitlines()
    assert re.search(r"^  stall_current\s+12 A\s+derived: stall current = V/R, from nominal_voltage, "
                     r"terminal_resistance$", r.output, re.M), r.output
    assert re.search(r"^  stall_torque\s+239 mN·m\s+derived: stall torque = Kt·\(Is − I0\), from torque_constant, "
                     r"stall_current, no_load_current$", r.output, re.M), r.output
    assert re.search(r"^  resistance_reference_temperature\s+25 °C\s+derived: " + re.escape(TREF_RELATION) + "$",
                     r.output, re.M)
    n_derived = len(rows(catalog.open(db), "testwerk-ta-1").query("origin == 'derived'"))
    assert sum("derived: " in line for line in lines) == n_derived
    assert sum(" from " in line for line in lines) == n_derived - 1  # all but the assumed 25 °C
    # the inconsistent record's show ends with its flag
    r = run("--db", db, "show", "testwerk-ta-2")
    assert r.output.splitlines()[-1].startswith("flag: testwerk-ta-2: stall current = V/R: stall_current given 20")


# -- the demo catalogue -------------------------------------------------------

@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    path = tmp_path_factory.mktemp("demo") / "demo.duckdb"
    build(path, out=lambda *a: None)
    return catalog.open(path)


def _manifest():
    return yaml.safe_load((SAMPLE / "manifest.yaml").read_text(encoding="utf-8"))


def test_demo_flags_exactly_the_documented_inconsistent_record(demo):
    bad = _manifest()["inconsistent_record"]  # sample_catalog/manifest.yaml
    bad_id = default_id(bad["manufacturer"], bad["part_number"])
    assert bad_id == "vaskeline-vk-c2232-24"
    flags = demo.check(tolerance=0.10)
    assert {f.record_id for f in flags} == {bad_id}, [str(f) for f in flags]
    # the manifest: Kt printed 30 % too high contradicts 1/Ke (from Kv) and Ts/(Is − I0)
    assert all("torque_constant" in f.given for f in flags)
    by_relation = {f.relation: f for f in flags}
    assert {"torque constant = 1/speed constant (SI)", "stall torque = Kt·(Is − I0)"} <= set(by_relation)
    kt = by_relation["torque constant = 1/speed constant (SI)"]
    assert kt.given_value == pytest.approx(33.24e-3, rel=1e-12)  # manifest 'printed: 33.24 mNm/A'
    assert kt.implied_value == pytest.approx(25.57e-3, rel=5e-4)  # manifest 'consistent_value: 25.57 mNm/A' (4 digits)
    assert kt.residual == pytest.approx(0.30, abs=5e-3)  # manifest: '30 % too high'
    # every other motor is consistent within 10 %; the re-derived catalogue says the same
    assert sorted(f.relation for f in demo.derive().flags) == sorted(by_relation)


KEY_FIELDS = ("torque_constant", "terminal_resistance", "no_load_speed", "stall_torque")


def test_demo_motors_have_the_key_constants(demo):
    m = demo.motors().set_index("id")
    assert len(m) == 60
    missing = {(rid, f) for rid, row in m.iterrows() for f in KEY_FIELDS if row[f] != row[f]}
    assert missing == set(), sorted(missing)
    assert (m[list(KEY_FIELDS)] > 0).all().all()
