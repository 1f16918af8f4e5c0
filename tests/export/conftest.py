"""Fixtures of the export tests: the demo catalogue, its selections, and the real programs.

A real program (LibreOffice, Chromium, poppler's pdftotext) that is missing skips its test on a developer's
machine and fails it in CI (``CI=true``), where ``.ci/run`` installs it.
"""
from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
QUERIES = ROOT / "queries"


def need_program(*names: str) -> str:
    """Path of the first of ``names`` on PATH; skip locally, fail in CI when none is there."""
    for name in names:
        path = shutil.which(name)
        if path:
            return path
    message = f"{' / '.join(names)} is not installed (apt-get install libreoffice-calc chromium poppler-utils)"
    if os.environ.get("CI", "").lower() == "true":
        pytest.fail(message + "; CI must have it")
    pytest.skip(message)


@pytest.fixture(scope="session")
def demo_db(tmp_path_factory) -> Path:
    """The demo catalogue (sample_catalog/), built once per test session."""
    from catalog.demo import build

    db = tmp_path_factory.mktemp("demo") / "demo.duckdb"
    build(db, out=lambda *a, **k: None)
    return db


@pytest.fixture(scope="session")
def demo_cat(demo_db):
    import catalog

    return catalog.open(demo_db)


@pytest.fixture(scope="session")
def wheel(demo_cat):
    """Selection of the drive-wheel cycle (catalogue gears and assumed ratios)."""
    return demo_cat.select(QUERIES / "drive_wheel.toml")


@pytest.fixture(scope="session")
def pump(demo_cat):
    """Selection of the water-pump operating points (direct drive)."""
    return demo_cat.select(QUERIES / "water_pump.toml")


@pytest.fixture
def need():
    """``need("soffice")`` → the program's path (skip locally / fail in CI when missing)."""
    return need_program
