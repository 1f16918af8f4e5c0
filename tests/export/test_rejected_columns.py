"""The selection export reads the rejected candidates as plain arrays (``Selection.rejected_columns``):
the same values and the same sheet as the ``rejected`` DataFrame, which keeps pandas' text type."""
from __future__ import annotations

from pathlib import Path

import pytest

QUERIES = Path(__file__).resolve().parents[2] / "queries"


@pytest.mark.parametrize("query", sorted(p.name for p in QUERIES.glob("*.toml")))
def test_the_rejected_sheet_is_the_same_from_arrays_or_from_the_frame(demo_cat, query):
    from catalog.export.columns import selection_dimensions, table_from_frame
    from catalog.export.writers import json_document

    sel = demo_cat.select(QUERIES / query, every_row=True)
    arrays = sel.rejected_columns()
    frame = sel.rejected
    assert list(arrays) == list(frame.columns)
    for name, values in arrays.items():
        assert len(values) == len(frame)
        if values.dtype.kind == "O":   # texts: str, or NaN where a maker or part number is missing
            assert all(isinstance(v, str) or v != v for v in values), name
    # the frame keeps pandas' string type for the texts (what a Python caller has always got)
    assert str(frame["reasons"].dtype) == "str" and str(frame["candidate"].dtype) == "str"
    dims = selection_dimensions()
    a = table_from_frame(arrays, "rejected", "si", dimensions=dims, freeze_columns=1)
    b = table_from_frame(frame, "rejected", "si", dimensions=dims, freeze_columns=1)
    assert json_document([a], {}) == json_document([b], {})
    assert [(c.name, c.kind, c.unit, c.si_unit) for c in a.columns] == [(c.name, c.kind, c.unit, c.si_unit)
                                                                         for c in b.columns]
