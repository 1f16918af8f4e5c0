"""The command line: exit codes, exact output lines, no tracebacks (README coverage: tests/test_docs.py)."""
from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from catalog.cli import cli

ROOT = Path(__file__).resolve().parents[2]

CSV = """manufacturer,part_number,nominal_voltage [V],stall_torque [mNm],mass [g]
Acme Test,M-1,24,350,180
Acme Test,M-2,24,250,120
"""


def run(*args):
    result = CliRunner().invoke(cli, list(map(str, args)), catch_exceptions=False)
    return result


@pytest.fixture
def good(tmp_path):
    p = tmp_path / "good.csv"
    p.write_text(CSV, encoding="utf-8")
    return p


def test_import_list_show_sql(tmp_path, good):
    db = tmp_path / "c.duckdb"
    r = run("--db", db, "import", good)
    assert r.exit_code == 0, r.output
    assert "2 record(s) created, 0 updated" in r.output
    r = run("--db", db, "list", "motors", "--format", "csv", "--units", "si")
    assert r.exit_code == 0
    header = r.output.splitlines()[0]
    assert "stall_torque [N·m]" in header
    r = run("--db", db, "show", "acme-m-1")
    assert r.exit_code == 0
    assert re.search(r"stall_torque\s+350 mN·m\s+given: '350'", r.output), r.output
    r = run("--db", db, "sql", "SELECT id FROM motors ORDER BY mass", "--format", "csv")
    assert r.output.splitlines() == ["id", "acme-m-2", "acme-m-1"]


def test_bad_file_exit_2_one_line_per_problem(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("manufacturer,part_number,no_load_speed\nA,1,12 N*m\nA,2,3 furlong\n", encoding="utf-8")
    db = tmp_path / "c.duckdb"
    r = run("--db", db, "import", bad)
    assert r.exit_code == 2
    errors = [line for line in r.output.splitlines() if line.startswith("error:")]
    assert f"error: {bad}:2:no_load_speed: '12 N*m' is a torque, expected a speed" in errors
    assert any(line.startswith(f"error: {bad}:3:no_load_speed:") for line in errors)
    assert "Traceback" not in r.output
    assert not db.exists() or run("--db", db, "sql", "SELECT count(*) AS n FROM records",
                                  "--format", "csv").output.splitlines()[1] == "0"


def test_validate_and_unknown_id(tmp_path, good):
    db = tmp_path / "c.duckdb"
    r = run("--db", db, "validate", good)
    assert r.exit_code == 0 and "all files valid" in r.output
    assert not db.exists()
    run("--db", db, "import", good)
    r = run("--db", db, "show", "acme-m-3")
    assert r.exit_code == 2
    assert "error: no record with id 'acme-m-3'; did you mean" in r.output


def test_sql_error_is_one_line(tmp_path, good):
    db = tmp_path / "c.duckdb"
    run("--db", db, "import", good)
    r = run("--db", db, "sql", "SELEC 1")
    assert r.exit_code == 2 and r.output.startswith("error: sql:")


def test_env_var_default_path(tmp_path, good, monkeypatch):
    db = tmp_path / "env.duckdb"
    monkeypatch.setenv("MOTORSHELF_DB", str(db))
    assert run("import", good).exit_code == 0
    assert db.exists()


def test_history_of_a_record(tmp_path, good):
    db = tmp_path / "c.duckdb"
    run("--db", db, "import", good)
    again = tmp_path / "again.csv"
    again.write_text(CSV.replace("Acme Test,M-1,24,350,180", "Acme Test,M-1,24,360,180"), encoding="utf-8")
    run("--db", db, "import", again)
    r = run("--db", db, "history", "acme-m-1")
    assert r.exit_code == 0, r.output
    changes = [line for line in r.output.splitlines() if " -> " in line]
    assert len(changes) == 1 and re.search(r"stall_torque\s+0\.35 \(350 mNm\) -> 0\.36 \(360 mNm\)", changes[0]), r.output
    every = run("--db", db, "history", "acme-m-1", "--all", "--format", "csv").output.splitlines()
    assert len(every) == 1 + 3   # stall torque changed; voltage and mass written again unchanged
    r = run("--db", db, "history", "acme-m-9")
    assert r.exit_code == 2 and r.output.startswith("error: no record with id 'acme-m-9'; did you mean")


def test_console_script_help_starts_without_heavy_imports():
    code = ("import sys; from catalog.cli import cli; "
            "heavy = [m for m in ('pandas', 'pint', 'duckdb', 'numpy', 'matplotlib', 'catalog.units', "
            "'catalog.export.writers', 'catalog.api') if m in sys.modules]; "
            "print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert out == ""
