"""A damaged catalogue file: one line naming the damage and what to do, exit code 3, never a
traceback, and nothing written into it.

A file cut short (a copy that stopped, a full disk, storage that lost its tail) failed with
DuckDB's ``IOException`` from ``list``, ``show``, ``check``, ``select`` and ``stock list``,
and ``export`` called it a ``--where`` error.  A file shorter than the blocks it holds is
refused on open; a block that does not read back (cut off, or failing its checksum) is
reported when it is read.
"""
from __future__ import annotations

import hashlib
import os
import shutil

import pytest

from tests.robustness.conftest import PYTHON, error_lines, run_cli

ENVELOPE = "queries/camera_pan.toml"
COMMANDS = [["list", "motors"], ["list", "gearheads"], ["show", "dmg-d-00007"], ["check"],
            ["select", ENVELOPE], ["stock", "list"], ["export", "motors", "--out", "{out}"],
            ["sql", "SELECT count(*), sum(stall_torque) FROM motors"], ["derive"], ["import", "{more}"]]


@pytest.fixture(scope="module")
def whole(tmp_path_factory):
    """A catalogue of a few megabytes (many blocks), made once."""
    import catalog

    folder = tmp_path_factory.mktemp("damaged")
    data = folder / "motors.csv"
    data.write_text("manufacturer,part_number,nominal_voltage [V],stall_torque [mNm],no_load_speed [rpm],"
                    "terminal_resistance [Ohm],mass [g],notes\n" + "".join(
                        f"Dmg Motors,D-{i:05d},24,{100 + i % 400},{3000 + i % 2000},{1 + i % 9},{50 + i % 300},"
                        f"note {i} {'x' * (i % 40)}\n" for i in range(20_000)), encoding="utf-8")
    db = folder / "whole.duckdb"
    catalog.open(db).import_([data])
    return db


def digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def run(db, command, tmp_path):
    more = tmp_path / "more.csv"
    more.write_text("manufacturer,part_number,stall_torque [mNm]\nDmg Motors,NEW-1,5\n", encoding="utf-8")
    args = [a.replace("{out}", str(tmp_path / "out.csv")).replace("{more}", str(more)) for a in command]
    return run_cli("--db", db, *args)


def damaged_line(db) -> str:
    return f"{db}: the catalogue file is damaged ("


@pytest.mark.parametrize("keep", [0.3, 0.6, 0.9])
def test_a_catalogue_cut_short(whole, tmp_path, keep):
    db = tmp_path / "cut.duckdb"
    shutil.copyfile(whole, db)
    os.truncate(db, int(db.stat().st_size * keep))
    before = digest(db)
    refused = set()
    for command in COMMANDS:
        result = run(db, command, tmp_path)
        assert "Traceback" not in result.output and (result.exception is None
                                                    or isinstance(result.exception, SystemExit)), command
        if result.exit_code == 3:
            lines = error_lines(result)
            assert len(lines) == 1 and lines[0].startswith(damaged_line(db)), (command, lines)
            assert lines[0].endswith("); nothing was changed, restore it from a backup")
            assert "--where" not in result.output
            refused.add(command[0] + " " + command[1] if command[0] in ("list", "stock") else command[0])
            assert digest(db) == before, command  # nothing written into a damaged file
        else:  # a command that reads only blocks before the cut works as on the whole file
            assert result.exit_code in (0, 1), (command, result.output)
            before = digest(db)
    # whatever reads every value meets the damage
    assert {"list motors", "select", "export", "sql"} <= refused


def test_a_block_that_fails_its_checksum(whole, tmp_path):
    db = tmp_path / "overwritten.duckdb"
    shutil.copyfile(whole, db)
    import duckdb

    con = duckdb.connect(str(db), read_only=True)  # a block holding values of the motors
    block, block_size = con.execute(
        "SELECT max(block_id), (SELECT block_size FROM pragma_database_size()) FROM pragma_storage_info('record_values') "
        "WHERE column_name = 'value_num' AND block_id >= 0").fetchall()[0]
    con.close()
    with open(db, "r+b") as fh:  # garbage over it, as a bad disk sector would leave
        fh.seek(3 * 4096 + block * block_size + 1000)
        fh.write(os.urandom(4096))
    for command in (["list", "motors"], ["select", ENVELOPE], ["export", "motors", "--out", "{out}"]):
        result = run(db, command, tmp_path)
        assert result.exit_code == 3, (command, result.output)
        lines = error_lines(result)
        assert len(lines) == 1 and lines[0].startswith(damaged_line(db) + "Corrupt database file: "), lines


def test_exit_code_3_from_the_command_line(whole, tmp_path):
    import subprocess

    db = tmp_path / "cut.duckdb"
    shutil.copyfile(whole, db)
    os.truncate(db, db.stat().st_size // 2)
    proc = subprocess.run([PYTHON, "-c", "import sys; from catalog.cli import main; main(sys.argv[1:])",
                           "--db", str(db), "list", "motors"], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 3 and "Traceback" not in proc.stderr
    assert proc.stderr.startswith(f"error: {damaged_line(db)}")
