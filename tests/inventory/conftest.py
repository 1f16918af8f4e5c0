"""Fixtures of the shelf tests: a small catalogue (three motors, one gearhead) copied per test."""
from __future__ import annotations

import shutil

import pytest

from tests.inventory.shelfdata import ENVELOPE, GEARHEADS, MOTORS


@pytest.fixture(scope="session")
def _base(tmp_path_factory):
    import catalog

    folder = tmp_path_factory.mktemp("shelf")
    (folder / "motors.csv").write_text(MOTORS, encoding="utf-8")
    (folder / "gearheads.csv").write_text(GEARHEADS, encoding="utf-8")
    db = folder / "base.duckdb"
    catalog.open(db).import_([folder / "motors.csv", folder / "gearheads.csv"])
    return db


@pytest.fixture
def shelf(_base, tmp_path):
    """A Catalog on a private copy of the small catalogue (no stock yet)."""
    import catalog

    db = tmp_path / "shelf.duckdb"
    shutil.copy(_base, db)
    return catalog.open(db)


@pytest.fixture
def envelope(tmp_path):
    def _make(stock_line: str = "") -> str:
        path = tmp_path / "light.toml"
        path.write_text(ENVELOPE.format(stock=stock_line), encoding="utf-8")
        return str(path)

    return _make
