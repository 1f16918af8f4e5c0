"""Faults of the catalogue file: disk full, read-only, I/O errors, old, newer and foreign files.

How the faults are made (tests run as root, so file modes stop nothing):

* disk full: a real one, from the OS.  The import runs in a subprocess whose
  RLIMIT_FSIZE is the catalogue's current size (SIGXFSZ ignored), so DuckDB's writes
  beyond it fail with EFBIG ("File too large"), as they would with ENOSPC.
* I/O errors at chosen statements (an INSERT half-way, the COMMIT) and a read-only
  file system: injected, by wrapping the DuckDB connection the Store opens so that
  statement raises the ``duckdb.IOException`` DuckDB itself raises for it.
* a folder that cannot be made: the catalogue's "folder" is a file (ENOTDIR).
"""
from __future__ import annotations

import hashlib
import resource
import shutil
import signal
import subprocess

import duckdb
import pytest

import catalog
from catalog.store import SCHEMA_VERSION, Store
from catalog.store.schema import MIGRATIONS
from tests.conftest import table_snapshot
from tests.robustness.conftest import GOOD_MOTORS, PYTHON, assert_clean_failure, error_lines, run_cli

def digest(*paths) -> list:
    return [hashlib.sha256(p.read_bytes()).hexdigest() if p.exists() else None for p in paths]


def wal(db):
    return db.with_name(db.name + ".wal")


# -- disk full ------------------------------------------------------------------------

def big_file(path, rows: int):
    path.write_text("manufacturer,part_number,stall_torque [mNm],notes\n" + "".join(
        f"Full Disk Motors,FD-{i:05d},{100 + i % 400},note {i}\n" for i in range(rows)), encoding="utf-8")
    return path


# 2k rows go to the write-ahead log, which cannot grow past the limit (the COMMIT fails);
# 20k rows are written to the file itself, which cannot grow (the checkpoint fails)
@pytest.mark.parametrize("rows, limit", [(2_000, 16 * 1024), (20_000, None)], ids=["log", "file"])
def test_disk_full_during_an_import(prefilled, template_snapshot, tmp_path, rows, limit):
    data = big_file(tmp_path / "big.csv", rows)
    limit = limit or prefilled.stat().st_size

    def no_room():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))

    proc = subprocess.run([PYTHON, "-c", "import sys; from catalog.cli import main; main(sys.argv[1:])",
                           "--db", str(prefilled), "import", str(data)],
                          preexec_fn=no_room, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2, proc.stdout + proc.stderr
    assert "Traceback" not in proc.stderr
    lines = [line for line in proc.stderr.splitlines() if line.startswith("error: ")]
    assert len(lines) == 1, proc.stderr
    assert lines[0].startswith(f"error: {prefilled}: cannot write the catalogue (")
    assert "File too large" in lines[0]
    assert lines[0].endswith("); nothing was changed, free some space or check the file's permissions "
                             "and try again")
    assert table_snapshot(prefilled) == template_snapshot  # reopened with room: as before
    assert run_cli("--db", prefilled, "import", data).exit_code == 0  # and writable again


# -- injected I/O errors ------------------------------------------------------------------

class FaultyConnection:
    """A DuckDB connection whose statement starting with ``fail_on`` raises ``error``."""

    def __init__(self, con, fail_on: str, error: Exception):
        self._con, self._fail_on, self._error = con, fail_on, error

    def execute(self, sql, *args, **kw):
        if sql.lstrip().upper().startswith(self._fail_on):
            raise self._error
        return self._con.execute(sql, *args, **kw)

    def __getattr__(self, name):
        return getattr(self._con, name)


def inject(monkeypatch, fail_on: str, message: str):
    real = Store._connect

    def connect(self, read_only: bool, **kw):
        con = real(self, read_only, **kw)
        return con if read_only else FaultyConnection(con, fail_on, duckdb.IOException(message))

    monkeypatch.setattr(Store, "_connect", connect)


DISK_FULL = 'IO Error: Could not write file "cat.duckdb": No space left on device'


@pytest.mark.parametrize("fail_on", ["INSERT INTO RECORD_VALUES", "INSERT INTO VALUE_HISTORY", "COMMIT",
                                     "UPDATE RECORDS"])
def test_io_error_during_an_import_changes_nothing(prefilled, template_snapshot, tmp_path, monkeypatch, fail_on):
    data = tmp_path / "update.csv"
    data.write_text(GOOD_MOTORS.replace("350,5200", "360,5300") + "Shelf Good Motors,G-400,24,100,1000,1,50,new\n",
                    encoding="utf-8")
    inject(monkeypatch, fail_on, DISK_FULL)
    result = run_cli("--db", prefilled, "import", data)
    assert_clean_failure(result)
    assert error_lines(result) == [
        f"{prefilled}: cannot write the catalogue ({DISK_FULL}); nothing was changed, free some space or "
        "check the file's permissions and try again"]
    monkeypatch.undo()
    assert table_snapshot(prefilled) == template_snapshot


def test_io_error_while_deriving_changes_nothing(prefilled, template_snapshot, monkeypatch):
    inject(monkeypatch, "INSERT INTO RECORD_VALUES", DISK_FULL)
    result = run_cli("--db", prefilled, "derive")
    assert_clean_failure(result)
    assert error_lines(result) == [
        f"{prefilled}: cannot write the catalogue ({DISK_FULL}); nothing was changed, free some space or "
        "check the file's permissions and try again"]
    monkeypatch.undo()
    assert table_snapshot(prefilled) == template_snapshot


def test_read_only_file_system(prefilled, template_snapshot, tmp_path, monkeypatch):
    real = duckdb.connect
    message = f'IO Error: Cannot open file "{prefilled}": Read-only file system'

    def connect(path, read_only=False, **kw):
        if not read_only and str(path) != ":memory:":
            raise duckdb.IOException(message)
        return real(path, read_only=read_only, **kw)

    monkeypatch.setattr(duckdb, "connect", connect)
    data = tmp_path / "new.csv"
    data.write_text("manufacturer,part_number,stall_torque\nRO Motors,R-1,1 N*m\n", encoding="utf-8")
    for args in (["import", data], ["derive"]):
        result = run_cli("--db", prefilled, *args)
        assert_clean_failure(result)
        assert error_lines(result) == [f"{prefilled}: cannot open the catalogue: {message}"]
    # reading a read-only catalogue still works
    result = run_cli("--db", prefilled, "sql", "SELECT count(*) AS n FROM records", "--format", "csv")
    assert result.exit_code == 0 and result.stdout.splitlines() == ["n", "4"]
    monkeypatch.undo()
    assert table_snapshot(prefilled) == template_snapshot


def test_catalogue_folder_that_is_a_file(tmp_path):
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("x", encoding="utf-8")
    data = tmp_path / "new.csv"
    data.write_text("manufacturer,part_number,stall_torque\nRO Motors,R-1,1 N*m\n", encoding="utf-8")
    db = blocker / "cat.duckdb"
    result = run_cli("--db", db, "import", data)
    assert_clean_failure(result)
    assert error_lines(result) == [f"{db}: cannot create the catalogue's folder (File exists)"] or \
        error_lines(result) == [f"{db}: cannot create the catalogue's folder (Not a directory)"]


# -- old, newer, foreign and broken files ----------------------------------------------------

COMMANDS = [["list", "motors"], ["list", "gearheads"], ["show", "shelf-g-100"],
            ["sql", "SELECT count(*) AS n FROM records"], ["derive"], ["check"]]


def old_file(path, version: int):
    """A catalogue written by the code of layout ``version`` (MIGRATIONS[1..version] only)."""
    con = duckdb.connect(str(path))
    for v in range(1, version + 1):
        for stmt in MIGRATIONS[v]:
            con.execute(stmt)
        con.execute("INSERT INTO schema_version (version) VALUES (?)", [v])
    con.execute("INSERT INTO batches VALUES (1, 'import', now(), 'old.csv', '', 'someone')")
    con.execute("INSERT INTO records VALUES ('shelf-g-100', 'motor', 'Shelf Good Motors', 'G-100', 1, 1)")
    con.execute("INSERT INTO record_values VALUES ('shelf-g-100', 'stall_torque', 0.35, NULL, '350', 'mNm', "
                "'given', NULL, NULL, 'old.csv', 2, 1)")
    con.close()
    return path


@pytest.mark.parametrize("version", range(1, SCHEMA_VERSION))
@pytest.mark.parametrize("command", COMMANDS, ids=lambda c: c[0] + (c[1] if c[0] == "list" else ""))
def test_older_file_migrates_on_open_keeping_its_data(tmp_path, version, command):
    db = old_file(tmp_path / "old.duckdb", version)
    kept = {t: rows for t, rows in table_snapshot(db).items() if t in ("records", "record_values")}
    result = run_cli("--db", db, *command)
    assert result.exit_code in (0, 1), result.output  # check exits 1 when a flag is raised
    assert "Traceback" not in result.output
    con = duckdb.connect(str(db), read_only=True)
    try:
        versions = [r[0] for r in con.execute("SELECT version FROM schema_version ORDER BY 1").fetchall()]
        assert versions == list(range(1, SCHEMA_VERSION + 1))
    finally:
        con.close()
    after = table_snapshot(db)
    assert after["records"] == kept["records"]
    given = [r for r in after["record_values"] if "'given'" in r]
    assert given == kept["record_values"]
    assert catalog.open(db).motors()["stall_torque"].tolist() == [0.35]


def test_every_command_refuses_a_newer_file_untouched(prefilled, tmp_path):
    con = duckdb.connect(str(prefilled))
    con.execute("INSERT INTO schema_version (version) VALUES (?)", [SCHEMA_VERSION + 1])
    con.close()
    before = digest(prefilled, wal(prefilled))
    data = tmp_path / "new.csv"
    data.write_text("manufacturer,part_number,stall_torque\nNew Motors,N-1,1 N*m\n", encoding="utf-8")
    message = (f"{prefilled}: catalogue file has layout version {SCHEMA_VERSION + 1}, newer than this "
               f"motorshelf knows ({SCHEMA_VERSION}); upgrade motorshelf, the file was not changed")
    for command in COMMANDS + [["import", data]]:
        result = run_cli("--db", prefilled, *command)
        assert_clean_failure(result)
        assert error_lines(result) == [message], command
        assert digest(prefilled, wal(prefilled)) == before, command


@pytest.mark.parametrize("content", [b"", b"this is a shopping list, not a catalogue\n", bytes(range(256)) * 64])
def test_a_file_that_is_not_a_database(tmp_path, content):
    db = tmp_path / "notes.duckdb"
    db.write_bytes(content)
    before = digest(db)
    data = tmp_path / "new.csv"
    data.write_text("manufacturer,part_number,stall_torque\nNew Motors,N-1,1 N*m\n", encoding="utf-8")
    for command in COMMANDS + [["import", data]]:
        result = run_cli("--db", db, *command)
        assert_clean_failure(result)  # an empty file too: DuckDB will not take it as a database
        assert error_lines(result) == [f"{db}: not a catalogue file (not a DuckDB database), expected a file "
                                       "made by motorshelf; the file was not changed"], command
        assert digest(db) == before


def test_a_duckdb_database_of_something_else_is_not_taken_over(tmp_path):
    db = tmp_path / "other.duckdb"
    con = duckdb.connect(str(db))
    con.execute("CREATE TABLE invoices (n INTEGER, total DOUBLE)")
    con.execute("INSERT INTO invoices VALUES (1, 9.5)")
    con.close()
    before = table_snapshot(db)
    data = tmp_path / "new.csv"
    data.write_text("manufacturer,part_number,stall_torque\nNew Motors,N-1,1 N*m\n", encoding="utf-8")
    for command in COMMANDS + [["import", data]]:
        result = run_cli("--db", db, *command)
        assert_clean_failure(result)
        assert error_lines(result) == [f"{db}: not a catalogue file (a DuckDB database without motorshelf's "
                                       "tables), expected a file made by motorshelf; the file was not changed"]
    assert table_snapshot(db) == before


def test_a_leftover_write_ahead_log_is_replayed_or_ignored_never_fatal(prefilled, template_snapshot, tmp_path):
    """A WAL left by a crash is replayed on open; a WAL of garbage is a clear error."""
    copy = tmp_path / "copy.duckdb"
    shutil.copyfile(prefilled, copy)
    wal(copy).write_bytes(b"\x00garbage" * 100)
    result = run_cli("--db", copy, "list", "motors", "--format", "csv")
    assert "Traceback" not in result.output
    if result.exit_code == 0:
        assert len(result.stdout.splitlines()) == 4  # header and the three good motors
    else:
        assert_clean_failure(result)
        assert error_lines(result)[0].startswith(f"{copy}: cannot open the catalogue: ")
