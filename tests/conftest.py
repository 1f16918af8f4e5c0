"""Shared fixtures: a fresh catalogue per test and a writer of small input files."""
from __future__ import annotations

import textwrap
from pathlib import Path

import pytest


@pytest.fixture(scope="session", autouse=True)
def _private_unit_memo(tmp_path_factory):
    """Each test session gets its own unit-conversion memo (catalog/units/diskcache.py)."""
    import os

    os.environ["MOTORSHELF_CACHE_DIR"] = str(tmp_path_factory.mktemp("unit-memo"))
    yield


@pytest.fixture
def db(tmp_path) -> Path:
    return tmp_path / "cat.duckdb"


@pytest.fixture
def cat(db):
    import catalog

    return catalog.open(db)


@pytest.fixture
def write(tmp_path):
    """write(name, text) -> path of a file holding the dedented text."""

    def _write(name: str, text: str, encoding: str = "utf-8") -> Path:
        path = tmp_path / name
        path.write_text(textwrap.dedent(text).lstrip("\n"), encoding=encoding)
        return path

    return _write


def table_snapshot(db: Path) -> dict:
    """Every row of every table of a catalogue file, for before/after comparisons."""
    import duckdb

    if not db.exists():
        return {}
    con = duckdb.connect(str(db), read_only=True)
    try:
        names = [r[0] for r in con.execute(
            "SELECT table_name FROM information_schema.tables WHERE table_type = 'BASE TABLE' ORDER BY 1").fetchall()]
        return {n: sorted(map(repr, con.execute(f'SELECT * FROM "{n}"').fetchall())) for n in names}
    finally:
        con.close()
