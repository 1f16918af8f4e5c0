"""``motorshelf export motors|gearheads``: every format, the SQL filter, and a real spreadsheet program."""
from __future__ import annotations

import csv
import json
import subprocess

import pytest
from click.testing import CliRunner

from catalog.cli import cli


def lo_first_sheet(soffice, path, tmp_path):
    """Rows of the first sheet of ``path`` as LibreOffice (headless, private profile) reads it."""
    conv = tmp_path / f"conv-{path.stem}"
    opts = "44,34,76,1,,0,false,true,false,false,false,1"   # UTF-8, raw values (not as shown), sheet 1
    subprocess.run([soffice, f"-env:UserInstallation=file://{tmp_path / 'lo-profile'}", "--headless",
                    "--convert-to", f"csv:Text - txt - csv (StarCalc):{opts}", "--outdir", str(conv), str(path)],
                   check=True, capture_output=True, timeout=240)
    (found,) = conv.glob("*.csv")
    return list(csv.reader(found.read_text(encoding="utf-8").splitlines()))


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


def test_export_formats_cli(demo_db, demo_cat, tmp_path):
    n = len(demo_cat.motors())
    for ext in ("xlsx", "csv", "json", "parquet"):
        out = tmp_path / f"motors.{ext}"
        r = run("--db", demo_db, "export", "motors", "--out", out)
        assert r.exit_code == 0, r.output
        assert f"{n} motors written" in r.output
        assert out.stat().st_size > 1000
    rows = list(csv.DictReader((tmp_path / "motors.csv").read_text(encoding="utf-8").splitlines()))
    assert len(rows) == n
    by_id = {r["id"]: r for r in rows}
    assert by_id["sorvanto-00341-06"]["part_number"] == "00341-06"
    assert "stall_torque [mN·m]" in rows[0] and "no_load_speed [rpm]" in rows[0]
    doc = json.loads((tmp_path / "motors.json").read_text(encoding="utf-8"))
    assert doc["units"]["stall_torque"] == "mN·m" and len(doc["records"]) == n


def test_export_gearheads_keeps_all_digit_part_numbers(demo_db, tmp_path):
    import openpyxl

    out = tmp_path / "g.xlsx"
    assert run("--db", demo_db, "export", "gearheads", "--out", out, "--units", "imperial").exit_code == 0
    ws = openpyxl.load_workbook(out)["gearheads"]
    header = [c.value for c in ws[1]]
    assert "max_continuous_torque [oz·in]" in header and "mass [lb]" in header
    col = header.index("part_number") + 1
    cells = [ws.cell(row=i, column=col) for i in range(2, ws.max_row + 1)]
    zeros = [c for c in cells if str(c.value).startswith("00")]
    assert zeros, "the demo has gearheads with all-digit part numbers such as 007210"
    assert all(c.data_type == "s" and c.number_format == "@" for c in cells)


def test_where_with_parameters(demo_db, demo_cat, tmp_path):
    expect = demo_cat.sql("SELECT id FROM motors WHERE mass < 0.2 AND commutation = 'brushless' ORDER BY id")
    out = tmp_path / "light.json"
    r = run("--db", demo_db, "export", "motors", "--out", out,
            "--where", "mass < $m AND commutation = $c", "--param", "m=0.2", "--param", "c=brushless")
    assert r.exit_code == 0, r.output
    got = [rec["id"] for rec in json.loads(out.read_text(encoding="utf-8"))["records"]]
    assert got == expect["id"].tolist() and got


@pytest.mark.parametrize("where, message", [
    ("mass < 0.2; DROP TABLE records", "error: --where: "),
    ("nosuch_column < 1", "nosuch_column"),
    ("id IN (SELECT column0 FROM read_csv('/etc/hostname'))", "error: --where: "),
])
def test_where_is_read_only_and_reports_errors(demo_db, tmp_path, where, message):
    from tests.conftest import table_snapshot

    before = table_snapshot(demo_db)
    r = CliRunner().invoke(cli, ["--db", str(demo_db), "export", "motors", "--out", str(tmp_path / "x.csv"),
                                 "--where", where])
    assert r.exit_code == 2
    assert message in r.output and "Traceback" not in r.output
    assert not (tmp_path / "x.csv").exists()
    assert table_snapshot(demo_db) == before


def test_bad_out_and_param(demo_db, tmp_path):
    r = run("--db", demo_db, "export", "motors", "--out", tmp_path / "x.xls")
    assert r.exit_code == 2 and "error: --out: " in r.output and ".xlsx" in r.output
    r = run("--db", demo_db, "export", "motors", "--out", tmp_path / "x.csv", "--param", "nonsense")
    assert r.exit_code == 2 and "error: --param: 'nonsense' is not NAME=VALUE" in r.output


def test_xlsx_sheets_panes_filter_provenance(demo_db, demo_cat, tmp_path):
    import openpyxl

    out = tmp_path / "m.xlsx"
    assert run("--db", demo_db, "export", "motors", "--out", out).exit_code == 0
    wb = openpyxl.load_workbook(out)
    assert wb.sheetnames == ["motors", "provenance", "about"]
    ws = wb["motors"]
    assert ws.freeze_panes == "B2"
    assert ws.auto_filter.ref == f"A1:{ws.cell(row=1, column=ws.max_column).column_letter}{ws.max_row}"
    header = [c.value for c in ws[1]]
    numeric = [h for h in header if "[" in h]
    assert "stall_torque [mN·m]" in numeric and "max_winding_temperature [°C]" in numeric
    row = {h: c for h, c in zip(header, ws[[c.value for c in ws["A"]].index("sorvanto-00341-06") + 1])}
    motor = demo_cat.motors().set_index("id").loc["sorvanto-00341-06"]
    assert row["stall_torque [mN·m]"].value == pytest.approx(motor["stall_torque"] * 1e3, rel=1e-9)
    assert row["stall_torque [mN·m]"].data_type == "n"
    assert row["part_number"].value == "00341-06" and row["part_number"].data_type == "s"
    prov = wb["provenance"]
    ph = [c.value for c in prov[1]]
    assert ph[:6] == ["record_id", "field", "value [see unit]", "unit", "value_si [see si_unit]", "si_unit"]
    for name in ("origin", "relation", "inputs", "raw_text", "source"):
        assert name in ph
    records = [dict(zip(ph, (c.value for c in r))) for r in prov.iter_rows(min_row=2)]
    derived = [r for r in records if r["origin"] == "derived"]
    given = [r for r in records if r["origin"] == "given"]
    assert derived and all(r["relation"] for r in derived)
    assert given and all(":" in r["source"] for r in given if r["source"])


def test_libreoffice_reads_the_same_values(demo_db, tmp_path, need):
    """Open the XLSX in LibreOffice (headless) and compare its CSV with what we wrote."""
    import openpyxl

    soffice = need("soffice", "libreoffice")
    out = tmp_path / "motors.xlsx"
    assert run("--db", demo_db, "export", "motors", "--out", out, "--where", "manufacturer LIKE 'Sorvanto%'"
               ).exit_code == 0
    wb = openpyxl.load_workbook(out)
    rows = lo_first_sheet(soffice, out, tmp_path)
    ws = wb["motors"]
    ours = [[c.value for c in r] for r in ws.iter_rows()]
    assert rows[0] == ours[0]
    assert len(rows) == len(ours) > 10
    for theirs, mine in zip(rows[1:], ours[1:]):
        for cell, value in zip(theirs, mine):
            if isinstance(value, (int, float)):
                assert float(cell) == pytest.approx(value, rel=1e-9)
            else:
                assert cell == ("" if value is None else value)
    ids = [r[ours[0].index("part_number")] for r in rows[1:]]
    assert "00341-06" in ids


def test_libreoffice_runs_no_formula_from_text(tmp_path, need):
    import openpyxl

    from catalog.export.columns import Table, text_column
    from catalog.export.writers import write_tables_to_file

    soffice = need("soffice", "libreoffice")
    traps = ["=1+2", "+3+4", "-5+6", "@SUM(1;2)", "=HYPERLINK(\"x\")"]
    path = write_tables_to_file([Table("t", [text_column("notes", traps)])], tmp_path / "t.xlsx")
    assert [c.value for c in openpyxl.load_workbook(path)["t"]["A"]][1:] == traps
    rows = lo_first_sheet(soffice, path, tmp_path)
    assert [r[0] for r in rows[1:]] == traps
