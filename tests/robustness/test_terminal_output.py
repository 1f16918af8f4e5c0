"""What reaches the user's terminal: no numpy warnings for extreme values, no control sequences
in the CSV and JSON that commands print.

Seen before: a catalogue with values such as 1e300 N·m printed numpy's RuntimeWarnings on
stderr during a selection; ``stock list`` and ``sql`` printed supplier text with escape
sequences raw in ``--format csv`` (the tables already showed them as escapes).
"""
from __future__ import annotations

import json
import subprocess
from pathlib import Path

import pytest

from tests.robustness.conftest import PYTHON, run_cli

ROOT = Path(__file__).resolve().parents[2]
CLI = [PYTHON, "-c", "import sys; from catalog.cli import main; main(sys.argv[1:])"]
EXTREME = """\
manufacturer,part_number,nominal_voltage [V],stall_torque [mNm],no_load_speed [rpm],terminal_resistance [Ohm],torque_constant [mNm/A],no_load_current [mA],rotor_inertia [g*cm^2],thermal_resistance_winding_housing [K/W],thermal_resistance_housing_ambient [K/W],thermal_time_constant_winding [s],thermal_time_constant_motor [s],max_winding_temperature [degC],mass [g]
Ext Motors,E-1,1e300,1e300,1e300,1e-300,1e300,1e-300,1e300,1e300,1e-300,1e300,1e-300,155,1e300
Ext Motors,E-2,1e-300,1e-300,1e-300,1e300,1e-300,1e300,1e-300,1e-300,1e300,1e-300,1e300,155,1e-300
Ext Motors,E-3,24,1e308,5000,1e-308,1e308,1,1,1,1,1,1,155,100
"""


@pytest.fixture(scope="module")
def extreme(tmp_path_factory):
    folder = tmp_path_factory.mktemp("extreme")
    data = folder / "extreme.csv"
    data.write_text(EXTREME, encoding="utf-8")
    db = folder / "cat.duckdb"
    proc = subprocess.run([*CLI, "--db", str(db), "import", str(data)], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    return db


@pytest.mark.parametrize("args", [
    ["select", "queries/camera_pan.toml"], ["select", "queries/drive_wheel.toml"],
    ["select", "queries/water_pump.toml", "--explain", "ext-e-1"],
    ["select", "queries/lift_axis.toml", "--out", "{tmp}/sel.xlsx"], ["derive"], ["check"], ["list", "motors"],
    ["report", "queries/water_pump.toml", "--out", "{tmp}/r.html"],
    ["plot", "queries/water_pump.toml", "--out", "{tmp}/plots", "--candidate", "ext-e-1", "--candidate", "ext-e-3"],
], ids=lambda a: "-".join(x for x in a[:2] if not x.startswith("{")))
def test_extreme_values_print_no_numpy_warnings(extreme, tmp_path, args):
    args = [a.replace("{tmp}", str(tmp_path)) for a in args]
    proc = subprocess.run([*CLI, "--db", str(extreme), *args], capture_output=True, text=True, timeout=300, cwd=ROOT)
    assert "Warning" not in proc.stderr and "Traceback" not in proc.stderr, proc.stderr
    assert all(line.startswith("error: ") for line in proc.stderr.splitlines()), proc.stderr
    assert proc.returncode in (0, 1, 2), proc.stderr
    if args[0] == "plot":  # drawn to the operating points, or values beyond what a diagram can hold: one line
        assert proc.returncode == 0 or "the diagram would reach beyond floating point" in proc.stderr


NASTY = "Term\x1b[2J\x1b]0;owned\x07 \x9b31m \u202etxt.exe"


@pytest.fixture
def with_nasty_text(prefilled, tmp_path):
    data = tmp_path / "nasty.csv"
    data.write_text("manufacturer,part_number,stall_torque [mNm],notes\n"
                    f"Nasty Motors,N-1,5,\"{NASTY}\"\n", encoding="utf-8")
    assert run_cli("--db", prefilled, "import", data).exit_code == 0
    stock = tmp_path / "stock.csv"
    stock.write_text(f"id,quantity,location,notes\nnasty-n-1,2,Lab 1,\"{NASTY}\"\n", encoding="utf-8")
    assert run_cli("--db", prefilled, "stock", "import", stock).exit_code == 0
    return prefilled


ACTIVE = ("\x1b", "\x07", "\x9b", "\u202e")


@pytest.mark.parametrize("args", [["sql", "SELECT notes FROM motors WHERE id = 'nasty-n-1'"],
                                  ["stock", "list"], ["list", "motors"]],
                         ids=["sql", "stock-list", "list"])
@pytest.mark.parametrize("fmt", ["csv", "json"])
def test_printed_csv_and_json_carry_no_control_sequences(with_nasty_text, args, fmt):
    result = run_cli("--db", with_nasty_text, *args, "--format", fmt)
    assert result.exit_code == 0, result.output
    assert not any(ch in result.stdout for ch in ACTIVE), repr(result.stdout)
    if fmt == "json":  # escaped the JSON way: the text reads back exactly
        if args[0] == "sql":
            assert json.loads(result.stdout)[0]["notes"] == NASTY
    elif args[0] != "list":
        assert "Term\\x1b[2J\\x1b]0;owned\\x07 \\x9b31m \\u202etxt.exe" in result.stdout


def test_export_still_writes_the_exact_text(with_nasty_text, tmp_path):
    out = tmp_path / "m.json"
    assert run_cli("--db", with_nasty_text, "export", "motors", "--out", out).exit_code == 0
    notes = [r["notes"] for r in json.loads(out.read_text(encoding="utf-8"))["records"] if r["id"] == "nasty-n-1"]
    assert notes == [NASTY]
