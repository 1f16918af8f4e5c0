"""Every envelope of ``queries/`` on the demo catalogue gives the pinned shortlist, verdicts and numbers.

The pins (``pinned/<envelope>.json.gz``) hold every candidate of every demo
envelope: its rank, verdict, failed checks, reason and note texts and every
number of the table (10 significant digits).  They guard refactoring: a change
of structure must leave them exactly as they are.  A change of the model that
is meant to move numbers re-pins them on purpose, and says so in its commit:

    MOTORSHELF_REPIN=1 .venv/bin/python -m pytest tests/select/test_pinned_selections.py
"""
from __future__ import annotations

import gzip
import json
import math
import os
from pathlib import Path

import pytest

QUERIES = Path(__file__).resolve().parents[2] / "queries"
PINS = Path(__file__).resolve().parent / "pinned"
TEXT = ["candidate", "motor", "gear", "worst_segment", "failed", "reasons", "notes", "currency"]
NUMBERS = ["rank", "ratio", "voltage_margin", "peak_current_margin", "rms_current_margin", "temperature_margin",
           "motor_speed_margin", "gear_speed_margin", "gear_peak_torque_margin", "gear_continuous_torque_margin",
           "smallest_margin", "winding_temperature", "rms_current", "peak_current", "energy_per_cycle", "mass",
           "price"]
FLAGS = ["passed", "pareto"]


def _num(v):
    v = float(v)
    if math.isnan(v):
        return "nan"
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    return float(f"{v:.10g}")


def snapshot(selection) -> dict:
    table = selection.table
    rows = []
    for rec in table.to_dict("records"):
        row = {k: ("" if rec.get(k) is None else str(rec[k])) for k in TEXT}
        row.update({k: _num(rec[k]) for k in NUMBERS})
        row.update({k: bool(rec[k]) for k in FLAGS})
        rows.append(row)
    return {"counts": list(selection.counts),
            "reason_counts": {k: int(v) for k, v in selection.reason_counts().items()},
            "shortlist": [str(c) for c in selection.shortlist["candidate"]],
            "rows": rows}


@pytest.mark.parametrize("query", sorted(p.name for p in QUERIES.glob("*.toml")))
def test_selection_is_pinned(demo_catalog, query):
    got = snapshot(demo_catalog.select(QUERIES / query))
    pin = PINS / (Path(query).stem + ".json.gz")
    if os.environ.get("MOTORSHELF_REPIN") == "1":
        PINS.mkdir(exist_ok=True)
        pin.write_bytes(gzip.compress(json.dumps(got, ensure_ascii=False, sort_keys=True).encode(), mtime=0))
        pytest.skip("re-pinned")
    assert pin.exists(), f"no pin for {query}: run with MOTORSHELF_REPIN=1 once"
    want = json.loads(gzip.decompress(pin.read_bytes()))
    assert got["counts"] == want["counts"]
    assert got["reason_counts"] == want["reason_counts"]
    assert got["shortlist"] == want["shortlist"]
    assert len(got["rows"]) == len(want["rows"])
    for g, w in zip(got["rows"], want["rows"]):
        for key, value in w.items():
            assert g.get(key) == value, f"{query}: {w['candidate']}: {key} {g.get(key)!r} != pinned {value!r}"
