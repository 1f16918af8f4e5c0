"""A catalogue on read-only storage is read like any other, also after an upgrade.

The wide views ``motors`` and ``gearheads`` are generated from the schema files; a file
made by a motorshelf with another field set gets new ones on open.  Where the file cannot
be written (read-only storage, another user's file) they are built in the connection
instead, and the file is left exactly as it is.  A layout migration cannot be done that
way: it is refused with what to do.

Tests run as root, whom file modes do not stop; the reads here run as another user
(tests/robustness/conftest.py: as_user) on a root-owned 0644 file in a 0755 folder.
"""
from __future__ import annotations

import hashlib
import shutil
import tempfile
from pathlib import Path

import duckdb
import pytest

from catalog.store import SCHEMA_VERSION
from tests.robustness.conftest import GOOD_MOTORS, USER_B, as_user, fill, needs_root, run_cli
from tests.robustness.test_store_faults import old_file

#: Commands that only read (each must work on a file it cannot write).
READERS = [["list", "motors", "--format", "csv"], ["show", "shelf-g-100"],
           ["sql", "SELECT id, mass FROM motors ORDER BY id", "--format", "csv"], ["check"],
           ["stock", "list"]]


@pytest.fixture
def folder():
    needs_root()
    path = Path(tempfile.mkdtemp(prefix="motorshelf-ro-"))
    path.chmod(0o755)
    yield path
    shutil.rmtree(path, ignore_errors=True)


def digest(*paths) -> list:
    return [hashlib.sha256(p.read_bytes()).hexdigest() if p.exists() else None for p in paths]


def as_an_older_field_set(db: Path) -> None:
    """Make ``db`` look written by a motorshelf whose motors had no ``mass``: its stored
    field signature differs and its view lacks the column."""
    con = duckdb.connect(str(db))
    view = con.execute("SELECT sql FROM duckdb_views() WHERE view_name = 'motors'").fetchall()[0][0]
    assert ", max(v.value_num) FILTER (WHERE (v.field = 'mass')) AS mass" in view
    con.execute(view.replace(", max(v.value_num) FILTER (WHERE (v.field = 'mass')) AS mass", "")
                .replace("CREATE VIEW", "CREATE OR REPLACE VIEW", 1))
    con.execute("UPDATE meta SET value = 'an older field set' WHERE key = 'fields_signature'")
    con.close()


def run_as(uid, *args):
    def run():
        result = run_cli(*args)
        return result.exit_code, result.stdout, result.stderr
    return run


def test_new_views_are_built_in_the_connection_when_the_file_cannot_be_written(folder):
    db = folder / "cat.duckdb"
    fill(db, folder)
    as_an_older_field_set(db)
    warm = folder / "warm.duckdb"  # every lazy import once, in this process, before the children fork
    shutil.copyfile(db, warm)
    for command in READERS:
        run_cli("--db", warm, *command)
    warm.unlink()
    warm.with_name(warm.name + ".lock").unlink(missing_ok=True)
    run_cli("--db", db, "sql", "SELECT 1")  # make the lock file (root's, 0644), then put the old views back
    as_an_older_field_set(db)
    db.chmod(0o644)
    files = [db, db.with_name(db.name + ".wal"), db.with_name(db.name + ".lock")]
    before = digest(*files)
    for command in READERS:
        code, out, err = as_user(USER_B, run_as(USER_B, "--db", db, *command))
        assert err == "" and code in ((0, 1) if command[0] == "check" else (0,)), (command, code, err)
        if command[0] == "list":
            assert out.splitlines()[0].split(",")[:2] == ["id", "commutation"] and "mass [g]" in out.splitlines()[0]
            assert "shelf-g-100" in out and ",180.0," in out
        if command[0] == "sql":
            assert out.splitlines() == ["id,mass", "shelf-g-100,0.18", "shelf-g-200,0.12", "shelf-g-300,0.26"]
    assert digest(*files) == before  # not a byte written


def test_an_older_layout_on_read_only_storage_says_what_to_do(folder):
    db = old_file(folder / "old.duckdb", SCHEMA_VERSION - 1)
    warm = folder / "warm.duckdb"
    shutil.copyfile(db, warm)
    run_cli("--db", warm, "list", "motors")
    warm.unlink()
    db.chmod(0o644)
    before = digest(db)
    code, out, err = as_user(USER_B, run_as(USER_B, "--db", db, "list", "motors"))
    assert code == 2 and "Traceback" not in err
    assert err.splitlines() == [
        f"error: {db}: catalogue file has layout version {SCHEMA_VERSION - 1}, older than this motorshelf's "
        f"({SCHEMA_VERSION}), and it cannot be upgraded where it is (cannot write the catalogue (cannot create "
        "its lock file old.duckdb.lock: Permission denied)); open it once with write access to upgrade it; the "
        "file was not changed"]
    assert digest(db) == before
