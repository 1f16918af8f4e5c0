"""Shared pieces of the robustness suite: a pre-filled catalogue, the CLI, fingerprints."""
from __future__ import annotations

import shutil
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
CORPUS = ROOT / "tests" / "bad_inputs"

GOOD_MOTORS = """\
manufacturer,part_number,nominal_voltage [V],stall_torque [mNm],no_load_speed [rpm],terminal_resistance [Ohm],mass [g],notes
Shelf Good Motors,G-100,24,350,5200,2.1,180,"first, with a comma"
Shelf Good Motors,G-200,12,250,6100,3.3,120,
Shelf Good Motors,G-300,48,500,4000,0.9,260,third
"""

GOOD_GEARHEADS = """\
manufacturer,part_number,ratio,stages,efficiency [%],max_continuous_torque [N*m]
Shelf Good Gears,GH-4,4,1,90,1.5
"""


def fill(db: Path, folder: Path) -> None:
    """Import the good motors and gearheads into ``db``."""
    import catalog

    motors = folder / "good_motors.csv"
    gears = folder / "good_gearheads.csv"
    motors.write_text(GOOD_MOTORS, encoding="utf-8")
    gears.write_text(GOOD_GEARHEADS, encoding="utf-8")
    catalog.open(db).import_([motors, gears])


@pytest.fixture(scope="session")
def template_db(tmp_path_factory) -> Path:
    """A catalogue holding a few good records, made once per session (copy it, never use it)."""
    folder = tmp_path_factory.mktemp("template")
    db = folder / "template.duckdb"
    fill(db, folder)
    return db


@pytest.fixture(scope="session")
def template_snapshot(template_db) -> dict:
    """``table_snapshot`` of the pre-filled catalogue (every copy starts with it)."""
    from tests.conftest import table_snapshot

    return table_snapshot(template_db)


@pytest.fixture
def prefilled(template_db, tmp_path) -> Path:
    """A fresh copy of the pre-filled catalogue."""
    db = tmp_path / "cat.duckdb"
    shutil.copyfile(template_db, db)
    return db


def run_cli(*args):
    """``motorshelf ARGS`` in process; returns the click Result (stderr kept apart)."""
    from click.testing import CliRunner

    from catalog.cli import cli

    return CliRunner().invoke(cli, [str(a) for a in args])


def error_lines(result) -> list[str]:
    """The ``error: `` lines of a result, without the prefix."""
    return [line[len("error: "):] for line in result.stderr.splitlines() if line.startswith("error: ")]


def assert_clean_failure(result, code: int = 2) -> None:
    """Exit ``code``, no traceback, no exception escaping the command."""
    assert result.exit_code == code, result.output
    assert "Traceback" not in result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)


def fingerprint(db: Path, skip_timestamps: bool = True) -> dict:
    """table -> (row count, hash of every row) of a catalogue, computed in DuckDB.

    Cheaper than :func:`tests.conftest.table_snapshot` for tens of thousands of rows;
    TIMESTAMP columns (when a batch ran) are left out so two runs compare equal.
    """
    import duckdb

    con = duckdb.connect(str(db), read_only=True)
    try:
        tables = [r[0] for r in con.execute(
            "SELECT table_name FROM information_schema.tables WHERE table_type = 'BASE TABLE' "
            "ORDER BY 1").fetchall()]
        out = {}
        for name in tables:
            cols = [r[0] for r in con.execute(
                "SELECT column_name FROM information_schema.columns WHERE table_name = ? "
                "AND (? = FALSE OR data_type NOT LIKE 'TIMESTAMP%') ORDER BY ordinal_position",
                [name, skip_timestamps]).fetchall()]
            row_expr = "hash(" + ", ".join(f'"{c}"' for c in cols) + ")"  # names from the catalogue itself
            out[name] = tuple(con.execute(
                f'SELECT count(*), coalesce(sum({row_expr} % 1000000007), 0) FROM "{name}"').fetchall()[0])
        return out
    finally:
        con.close()


PYTHON = sys.executable


# -- another user ------------------------------------------------------------------------------
#: Two users without a name on most systems (nobody, and the uid below it), and a group they share.
USER_A, USER_B, SHARED_GROUP = 65534, 65533, 65530


def as_user(uid: int, func, gid: int | None = None, groups=(), umask: int = 0o022):
    """Run ``func()`` in a forked child as user ``uid`` (primary group ``gid``, default
    ``uid``; supplementary ``groups``) with ``umask``; returns what it returned, or
    re-raises its exception as an AssertionError with the child's text.

    The tests run as root, whom file permissions do not stop, so a second user is made
    here with ``os.setuid`` (root only: see :func:`needs_root`).  The child cannot read
    this interpreter's files under /root, so everything ``func`` needs must be imported
    (and its lazy imports run once) before; the result travels back pickled.
    """
    import os
    import pickle
    import traceback

    read, write = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: never returns into pytest
        code = 0
        try:
            os.close(read)
            os.setgroups(list(groups))
            os.setgid(uid if gid is None else gid)
            os.setuid(uid)
            os.umask(umask)
            payload = pickle.dumps(("ok", func()))
        except BaseException as exc:  # noqa: BLE001 - everything goes back to the parent
            payload = pickle.dumps(("error", f"{type(exc).__name__}: {exc}\n{traceback.format_exc()}"))
            code = 1
        with os.fdopen(write, "wb") as fh:
            fh.write(payload)
        os._exit(code)
    os.close(write)
    with os.fdopen(read, "rb") as fh:
        data = fh.read()
    os.waitpid(pid, 0)
    kind, value = pickle.loads(data)
    if kind == "error":
        raise AssertionError(f"as user {uid}: {value}")
    return value


def needs_root():
    """Skip unless running as root (only root can become another user)."""
    import os

    if os.geteuid() != 0:
        pytest.skip("needs root: the test becomes two other users with os.setuid")
