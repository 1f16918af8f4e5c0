"""`motorshelf select`: exit codes, key output lines, --explain, --format."""
from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from catalog.cli import cli

QUERIES = Path(__file__).resolve().parents[2] / "queries"


def run(*args):
    return CliRunner().invoke(cli, list(map(str, args)), catch_exceptions=False)


def test_select_prints_shortlist_and_reason_counts(demo_catalog):
    r = run("--db", demo_catalog.path, "select", QUERIES / "drive_wheel.toml", "--top", "3")
    assert r.exit_code == 0, r.output
    lines = r.output.splitlines()
    assert lines[0].startswith("envelope drive_wheel (")
    assert " pass, " in lines[0] and lines[0].endswith(" rejected")
    assert "rejections per check (a candidate can fail several):" in lines
    assert any(line.strip().split("  ", 1)[-1].startswith("voltage: needs more voltage") for line in lines)


def test_select_json_and_explain(demo_catalog):
    r = run("--db", demo_catalog.path, "select", QUERIES / "lift_axis.toml", "--format", "json")
    assert r.exit_code == 0
    rows = json.loads(r.output)
    assert rows[0]["rank"] == 1
    cid = rows[0]["candidate"]
    r = run("--db", demo_catalog.path, "select", QUERIES / "lift_axis.toml", "--explain", cid)
    assert r.exit_code == 0
    assert r.output.startswith(f"candidate {cid}\n")
    assert "  verdict: passes, rank 1 of " in r.output
    assert "    voltage_margin" in r.output
    for segment in ("raise", "hold", "lower", "parked"):
        assert f"  {segment} " in r.output


def test_select_nothing_passes_exit_1(demo_catalog):
    r = run("--db", demo_catalog.path, "select", QUERIES / "impossible.toml")
    assert r.exit_code == 1
    assert "no candidate meets the envelope" in r.output


def test_select_errors_exit_2(demo_catalog, envelope_file):
    bad = envelope_file('name = "x"\n[supply]\nnominal_voltage = "24 N*m"\n[[points]]\nname = "p"\ntorque = "1 N*m"\nspeed = "1 rpm"\nkind = "peak"\n')
    r = CliRunner().invoke(cli, ["--db", str(demo_catalog.path), "select", str(bad)])
    assert r.exit_code == 2
    assert "error: " + str(bad) + ":supply.nominal_voltage: '24 N*m' is a torque, expected a voltage" in r.output
    assert "Traceback" not in r.output
    r = CliRunner().invoke(cli, ["--db", str(demo_catalog.path), "select", str(QUERIES / "lift_axis.toml"),
                                 "--explain", "no-such-motor"])
    assert r.exit_code == 2
    assert r.output.startswith("error: no candidate 'no-such-motor' for this envelope")


def test_select_on_an_empty_catalogue_says_so(tmp_path):
    db = tmp_path / "empty.duckdb"
    r = run("--db", db, "select", QUERIES / "lift_axis.toml", "--out", tmp_path / "short.xlsx")
    assert r.exit_code == 1
    assert r.output.splitlines()[-1] == (f"no candidate: {db} holds no motors "
                                         "(`motorshelf import FILE` adds datasheets)")
    r = run("--db", db, "select", QUERIES / "lift_axis.toml", "--format", "json")
    assert r.exit_code == 1 and json.loads(r.output) == []
