"""The export methods of the API (``Catalog.export``, ``report``, ``plot``, ``select(out=...)``) and the
table of export formats that the help texts and checks are made from."""
from __future__ import annotations

import json

import pytest

from catalog.errors import InputError
from catalog.export.formats import FORMATS, extension_list, keeps_si_text
from catalog.export.writers import check_out, units_written
from tests.conftest import table_snapshot
from tests.export.conftest import QUERIES


def test_the_format_table_makes_the_help_texts():
    assert extension_list() == ".xlsx, .csv, .json or .parquet"
    assert keeps_si_text() == "Parquet always keeps SI"
    assert [f.extension for f in FORMATS.values() if f.keeps_si] == [".parquet"]
    assert units_written("a.parquet", "imperial") == "si" and units_written("a.XLSX", "imperial") == "imperial"
    from click.testing import CliRunner

    from catalog.cli import cli

    helps = {name: CliRunner().invoke(cli, [*name.split(), "--help"], terminal_width=200).output
             for name in ("export", "select", "report")}
    assert ".xlsx, .csv, .json or .parquet" in helps["export"] and "Parquet always keeps SI" in helps["export"]
    assert ".html or .htm" in helps["report"]


def test_check_out_words_one_problem(tmp_path):
    with pytest.raises(InputError, match=r"^--out: .*x\.xls: unknown file extension '\.xls', expected one of "
                                         r"\.xlsx, \.csv, \.json, \.parquet$"):
        check_out(tmp_path / "x.xls")
    with pytest.raises(InputError, match=r"^--out: .*r\.pdf: unknown file extension '\.pdf', expected one of "
                                         r"\.html, \.htm$"):
        check_out(tmp_path / "r.pdf", (".html", ".htm"))
    with pytest.raises(InputError, match="folder .*nowhere' does not exist"):
        check_out(tmp_path / "nowhere" / "x.csv")
    assert check_out(tmp_path / "x.CSV") == tmp_path / "x.CSV"


def test_export_writes_the_catalogue(demo_cat, tmp_path):
    path, count = demo_cat.export("gearheads", tmp_path / "g.json", where="mass < $m", params={"m": 0.2},
                                  units="si")
    doc = json.loads(path.read_text(encoding="utf-8"))
    assert count == len(doc["records"]) > 0 and all(r["mass"] < 0.2 for r in doc["records"])
    assert doc["units"]["mass"] == "kg"
    assert doc["about"]["units"] == "si" and doc["about"]["where"] == "mass < $m"
    with pytest.raises(InputError, match="kind: 'gears' is not motors or gearheads"):
        demo_cat.export("gears", tmp_path / "g.csv")


def test_select_out_report_and_plot(demo_db, demo_cat, tmp_path):
    before = table_snapshot(demo_db)
    sel = demo_cat.select(QUERIES / "water_pump.toml", top=2, out=tmp_path / "pump.csv", units="imperial")
    assert len(sel.shortlist) == 2
    assert (tmp_path / "pump.csv").read_bytes().count(b"\r\n") == 3   # header + 2 rows
    sel = demo_cat.report(QUERIES / "water_pump.toml", tmp_path / "pump.html", top=2, plots=1)
    assert sel.counts[0] > 0 and (tmp_path / "pump.html").read_text(encoding="utf-8").count('class="candidate"') == 1
    paths = demo_cat.plot(QUERIES / "water_pump.toml", tmp_path / "plots", top=2, format="svg")
    assert [p.suffix for p in paths] == [".svg"] * 3   # two candidates and their comparison
    with pytest.raises(InputError, match="format: 'pdf' is not an image format, expected one of png, svg"):
        demo_cat.plot(QUERIES / "water_pump.toml", tmp_path / "plots", format="pdf")
    with pytest.raises(InputError, match="^--out: "):
        demo_cat.select(QUERIES / "water_pump.toml", out=tmp_path / "pump.txt")
    assert not (tmp_path / "pump.txt").exists()
    assert table_snapshot(demo_db) == before   # exports read the catalogue only
