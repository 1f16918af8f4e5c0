"""A selection to XLSX, CSV, JSON and Parquet: every sheet, units, provenance and cautions."""
from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from catalog.export import CAUTION, write_selection


@pytest.fixture(scope="module")
def wheel_xlsx(wheel, demo_cat, tmp_path_factory):
    return write_selection(wheel, tmp_path_factory.mktemp("sel") / "wheel.xlsx", catalog=demo_cat)


def sheet_rows(ws):
    header = [c.value for c in ws[1]]
    return header, [dict(zip(header, (c.value for c in r))) for r in ws.iter_rows(min_row=2)]


def test_xlsx_has_every_sheet(wheel_xlsx):
    import openpyxl

    wb = openpyxl.load_workbook(wheel_xlsx)
    assert wb.sheetnames == ["shortlist", "rejected", "rejection counts", "envelope", "provenance", "cautions",
                             "about"]
    for ws in wb:
        assert ws.freeze_panes and ws.freeze_panes.endswith("2"), ws.title
        assert ws.auto_filter.ref and ws.auto_filter.ref.startswith("A1:"), ws.title


def test_shortlist_sheet_values_and_units(wheel, wheel_xlsx):
    import openpyxl

    ws = openpyxl.load_workbook(wheel_xlsx)["shortlist"]
    header, rows = sheet_rows(ws)
    assert ws.freeze_panes == "C2"
    for name in ("voltage_margin [%]", "temperature_margin [K]", "winding_temperature [°C]", "rms_current [A]",
                 "energy_per_cycle [J]", "mass [g]", "ratio [1]", "rank [1]"):
        assert name in header
    assert [r["candidate"] for r in rows] == wheel.shortlist["candidate"].tolist()
    first = wheel.shortlist.iloc[0]
    assert rows[0]["winding_temperature [°C]"] == pytest.approx(first["winding_temperature"] - 273.15)
    assert rows[0]["voltage_margin [%]"] == pytest.approx(first["voltage_margin"] * 100)
    assert rows[0]["mass [g]"] == pytest.approx(first["mass"] * 1000)
    assert ws.cell(row=2, column=header.index("candidate") + 1).data_type == "s"
    assert ws.cell(row=2, column=header.index("mass [g]") + 1).data_type == "n"


def test_rejected_and_counts(wheel, wheel_xlsx):
    import openpyxl

    wb = openpyxl.load_workbook(wheel_xlsx)
    _, rej = sheet_rows(wb["rejected"])
    assert len(rej) == len(wheel.rejected)
    assert all(r["reasons"] for r in rej) and all(r["failed"] for r in rej)
    _, counts = sheet_rows(wb["rejection counts"])
    assert {r["check"]: r["candidates [1]"] for r in counts} == wheel.reason_counts().to_dict()


def test_envelope_sheet_every_input_with_unit(wheel, wheel_xlsx):
    import openpyxl

    _, rows = sheet_rows(openpyxl.load_workbook(wheel_xlsx)["envelope"])
    by_key = {r["key"]: r for r in rows}
    assert by_key["supply.min_voltage"]["as given"] == "21 V"
    assert by_key["supply.min_voltage"]["value [see unit]"] == 21 and by_key["supply.min_voltage"]["unit"] == "V"
    amb = by_key["environment.ambient_temperature"]
    assert (amb["as given"], amb["value [see unit]"], amb["unit"]) == ("40 degC", 40, "°C")
    assert amb["value_si [see si_unit]"] == pytest.approx(313.15) and amb["si_unit"] == "K"
    force = by_key["cycle.segments[2].force"]     # the slope's force, at the wheel mechanism
    assert (force["as given"], force["value [see unit]"], force["unit"]) == ("63.45 N", 63.45, "N")
    radius = by_key["load.mechanism.radius"]
    assert (radius["as given"], radius["value [see unit]"], radius["unit"]) == ("100 mm", 100, "mm")
    assert by_key["constraints.margins.voltage"]["unit"] == "%"
    assert by_key["ranking.keys"]["as given"] == "mass, -smallest_margin"
    assert len([k for k in by_key if k.startswith("cycle.segments[")]) >= 5 * 3


def test_provenance_and_cautions(wheel, wheel_xlsx):
    import openpyxl

    wb = openpyxl.load_workbook(wheel_xlsx)
    _, prov = sheet_rows(wb["provenance"])
    used = set(wheel.shortlist["motor"]) | {g for g in wheel.shortlist["gear"] if not g.startswith("ratio-")}
    assert {r["record_id"] for r in prov} == used
    kt = [r for r in prov if r["field"] == "torque_constant"]
    assert kt and all(r["origin"] in ("given", "derived") for r in kt)
    assert all(r["raw_text"] and r["source"] for r in prov if r["origin"] == "given")
    assert all(r["relation"] for r in prov if r["origin"] == "derived")
    _, cautions = sheet_rows(wb["cautions"])
    assert cautions[0] == {"topic": "caution", "text": CAUTION}
    assert any(r["topic"] == "tolerance corner" for r in cautions)


def test_csv_json_parquet(wheel, demo_cat, tmp_path):
    import pyarrow.parquet as pq

    rows = list(csv.reader(write_selection(wheel, tmp_path / "s.csv", "imperial", demo_cat)
                           .read_text(encoding="utf-8").splitlines()))
    assert "mass [lb]" in rows[0] and "winding_temperature [°F]" in rows[0]
    assert len(rows) == len(wheel.shortlist) + 1
    doc = json.loads(write_selection(wheel, tmp_path / "s.json", "si", demo_cat).read_text(encoding="utf-8"))
    assert doc["table"] == "shortlist" and doc["units"]["winding_temperature"] == "K"
    assert [r["candidate"] for r in doc["records"]] == wheel.shortlist["candidate"].tolist()
    assert set(doc["tables"]) == {"rejected", "rejection counts", "envelope", "provenance", "cautions"}
    assert doc["about"]["caution"] == CAUTION
    table = pq.read_table(write_selection(wheel, tmp_path / "s.parquet", "datasheet", demo_cat))
    assert table.schema.field("winding_temperature").metadata[b"unit"] == b"K"
    assert table.column("winding_temperature").to_pylist() == pytest.approx(
        wheel.shortlist["winding_temperature"].tolist())


def test_no_passing_candidate(demo_cat, tmp_path):
    import openpyxl

    sel = demo_cat.select(Path(__file__).resolve().parents[2] / "queries" / "impossible.toml")
    wb = openpyxl.load_workbook(write_selection(sel, tmp_path / "none.xlsx", catalog=demo_cat))
    assert wb["shortlist"].max_row == 1 and wb["rejected"].max_row == len(sel.rejected) + 1


def test_every_numeric_shortlist_column_has_a_known_unit(wheel, pump):
    """A new numeric column of the selection engine must get its dimension in selection_dimensions()."""
    from catalog.export.columns import selection_dimensions

    SELECTION_DIMENSIONS = selection_dimensions()

    for sel in (wheel, pump):
        for frame in (sel.shortlist, sel.rejected):
            numeric = [c for c in frame.columns if frame[c].dtype.kind in "fiu"]
            assert set(numeric) <= set(SELECTION_DIMENSIONS), set(numeric) - set(SELECTION_DIMENSIONS)


def test_select_out_cli(demo_db, tmp_path):
    from click.testing import CliRunner

    from catalog.cli import cli

    envelope = Path(__file__).resolve().parents[2] / "queries" / "water_pump.toml"
    out = tmp_path / "pump.xlsx"
    r = CliRunner().invoke(cli, ["--db", str(demo_db), "select", str(envelope), "--out", str(out),
                                 "--units", "si"], catch_exceptions=False)
    assert r.exit_code == 0, r.output
    assert f"{out}: shortlist of" in r.output
    import openpyxl

    ws = openpyxl.load_workbook(out)["shortlist"]
    assert "winding_temperature [K]" in [c.value for c in ws[1]]
    r = CliRunner().invoke(cli, ["--db", str(demo_db), "select", str(envelope), "--out", str(tmp_path / "p.txt")])
    assert r.exit_code == 2 and "unknown file extension '.txt'" in r.output and not (tmp_path / "p.txt").exists()
