"""Fields practitioners look for: shaft size, IEC 60529 code, encoder, brake, peak current, lead time."""
from __future__ import annotations

import pytest
import scipy.constants as sc
from click.testing import CliRunner

from catalog.cli import cli

# NIST SP 811 (2008) App. B.8: inch = 0.0254 m exactly; ozf·in from scipy.constants (ounce, g_n, inch)
OZF_IN = sc.ounce * sc.g * sc.inch
WEEK, DAY = 7 * 86400.0, 86400.0          # SI brochure: d = 86 400 s (exact)

MOTORS = """\
manufacturer,part_number,nominal_voltage [V],shaft_diameter,shaft_length,ingress_protection,encoder,brake_holding_torque,max_peak_current [A],lead_time
Field Test,F-1,24,6 mm,0.75 in,IP54,"optical, 500 counts per turn, 3 channels",20 oz-in,12.5,6 weeks
Field Test,F-2,24,8 mm,20 mm,IPX4,,0.35 N*m,30,10 days
Field Test,F-3,12,4 mm,12 mm,IP20B,,,,
"""
GEARS = """\
manufacturer,part_number,ratio,shaft_diameter [mm],shaft_length [mm],ingress_protection,lead_time
Field Test,G-1,10,10,25,IP65,3 wk
"""


@pytest.fixture
def stocked(cat, write):
    cat.import_([write("m.csv", MOTORS), write("g.csv", GEARS)])
    return cat


def test_new_fields_store_si(stocked):
    m = stocked.motors().set_index("id")
    assert m.loc["field-f-1", "shaft_diameter"] == pytest.approx(0.006, rel=1e-12)
    assert m.loc["field-f-1", "shaft_length"] == pytest.approx(0.75 * 0.0254, rel=1e-12)
    assert m.loc["field-f-1", "ingress_protection"] == "IP54"
    assert m.loc["field-f-1", "encoder"] == "optical, 500 counts per turn, 3 channels"
    assert m.loc["field-f-1", "brake_holding_torque"] == pytest.approx(20 * OZF_IN, rel=1e-12)
    assert m.loc["field-f-2", "brake_holding_torque"] == pytest.approx(0.35, rel=1e-12)
    assert m.loc["field-f-1", "max_peak_current"] == 12.5
    assert m.loc["field-f-1", "lead_time"] == pytest.approx(6 * WEEK, rel=1e-12)
    assert m.loc["field-f-2", "lead_time"] == pytest.approx(10 * DAY, rel=1e-12)
    assert m.loc["field-f-2", "ingress_protection"] == "IPX4" and m.loc["field-f-3", "ingress_protection"] == "IP20B"
    g = stocked.gearheads().set_index("id").loc["field-g-1"]
    assert (g["shaft_diameter"], g["ingress_protection"]) == (pytest.approx(0.010), "IP65")
    assert g["lead_time"] == pytest.approx(3 * WEEK, rel=1e-12)


@pytest.mark.parametrize("column, cell, message", [
    # IEC 60529 cl. 4: first numeral 0-6, second 0-9 (X where not given), then A-D, then H/M/S/W
    ("ingress_protection", "IP74", "'IP74' does not match the expected form of an IEC 60529 code"),
    ("ingress_protection", "ip54", "'ip54' does not match the expected form of an IEC 60529 code"),
    ("ingress_protection", "IP54E", "'IP54E' does not match the expected form of an IEC 60529 code"),
    ("shaft_diameter", "-3 mm", "'-3 mm' is -0.003 m in SI, expected positive"),
    ("shaft_diameter", "300 mm", "'300 mm' is 0.3 m in SI, expected at most 0.2 m"),
    ("brake_holding_torque", "2 A", "'2 A' is a current, expected a torque"),
    ("max_peak_current", "0 A", "expected positive"),
    ("lead_time", "-2 d", "'-2 d' is -172800 s in SI, expected zero or more"),
])
def test_bad_values_are_refused_in_words(cat, write, column, cell, message):
    header = "manufacturer,part_number,nominal_voltage [V]," + column
    report = cat.validate([write("bad.csv", f"{header}\nField Test,B-1,24,{cell}\n")])
    (problem,) = report.problems
    assert f":2:{column}: " in str(problem) and message in str(problem)


@pytest.mark.parametrize("code", ["IP00", "IP68", "IP69", "IPX7", "IP5X", "IPXXB", "IP20BW", "IP44M"])
def test_every_iec_60529_form_is_read(cat, write, code):
    report = cat.validate([write("ok.csv", f"manufacturer,part_number,encoder,ingress_protection\nF,P,none,{code}\n")])
    assert report.ok, [str(p) for p in report.problems]


def test_shown_and_exported_like_the_others(stocked, tmp_path):
    import openpyxl

    out = tmp_path / "m.xlsx"
    r = CliRunner().invoke(cli, ["--db", str(stocked.path), "export", "motors", "--out", str(out)])
    assert r.exit_code == 0, r.output
    ws = openpyxl.load_workbook(out)["motors"]
    head = [c.value for c in ws[1]]
    for h in ("shaft_diameter [mm]", "shaft_length [mm]", "ingress_protection", "encoder",
              "brake_holding_torque [mN·m]", "max_peak_current [A]", "lead_time [d]"):
        assert h in head
    row = {h: c.value for h, c in zip(head, ws[[c.value for c in ws["A"]].index("field-f-1") + 1])}
    assert row["lead_time [d]"] == pytest.approx(42.0) and row["ingress_protection"] == "IP54"
    assert row["brake_holding_torque [mN·m]"] == pytest.approx(20 * OZF_IN * 1e3)
    r = CliRunner().invoke(cli, ["--db", str(stocked.path), "show", "field-f-1"])
    assert r.exit_code == 0
    for text in ("shaft_diameter", "IP54", "encoder", "brake_holding_torque", "max_peak_current", "lead_time",
                 "42"):
        assert text in r.output
