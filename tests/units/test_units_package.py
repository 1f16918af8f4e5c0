"""Package contract: light import, one registry, docs generated from the tables."""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

import catalog.units as units
from catalog.units import atoms, get_registry, parse_unit, spelling_table_markdown

ROOT = Path(__file__).resolve().parents[2]


def test_import_does_not_load_pint_numpy_or_pandas():
    code = ("import sys, catalog.units; "
            "print(sorted(m for m in ('pint', 'pandas', 'numpy') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_public_api():
    for name in ("get_registry", "parse_unit", "Conversion", "UnitError", "DIMENSIONS", "dimension_noun",
                 "parse_number", "split_value_unit", "convert_column", "parse_cells", "to_display",
                 "display_unit", "parse_quantity", "spelling_table_markdown"):
        assert name in units.__all__ and hasattr(units, name)


def test_one_registry(monkeypatch):
    import pint

    ureg = get_registry()
    assert get_registry() is ureg

    def refuse(*a, **k):  # pragma: no cover - must not be called
        raise AssertionError("a second UnitRegistry was created")

    monkeypatch.setattr(pint, "UnitRegistry", refuse)
    parse_unit.cache_clear()
    assert parse_unit("lbf·ft", "torque").factor > 1.0
    assert get_registry() is ureg


def test_conversion_is_frozen():
    conv = parse_unit("mNm", "torque")
    with pytest.raises(AttributeError):
        conv.factor = 2.0  # type: ignore[misc]


def test_markdown_renders_every_table_entry():
    md = spelling_table_markdown()
    for spelling in atoms.ATOMS:
        assert f"`{spelling}`" in md
    for glued in atoms.GLUED:
        assert f"`{glued}`" in md
    for table in atoms.MISPRINTS.values():
        for misprint in table:
            assert f"`{misprint}`" in md


def test_every_glued_spelling_parses():
    """Each glued spelling is read in at least one field (the table holds no dead entries)."""
    for glued in atoms.GLUED:
        ok = []
        for dim in ("torque", "torque_constant", "energy"):
            try:
                ok.append(parse_unit(glued, dim))
            except units.UnitError:
                pass
        assert ok, glued
