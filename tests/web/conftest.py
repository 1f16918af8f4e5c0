"""Fixtures of the web tests: the demo catalogue built once, a fresh copy per test, the app on it."""
from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from webhelp import make_client


@pytest.fixture(scope="session")
def demo_file(tmp_path_factory) -> Path:
    from catalog.demo import build

    db = tmp_path_factory.mktemp("web-demo") / "demo.duckdb"
    build(db, out=lambda *a, **k: None)
    return db


@pytest.fixture
def demo_db(demo_file, tmp_path) -> Path:
    """A copy of the demo catalogue this test may write."""
    db = tmp_path / "demo.duckdb"
    shutil.copy(demo_file, db)
    return db


@pytest.fixture
def client(demo_db):
    with make_client(demo_db) as c:
        yield c
