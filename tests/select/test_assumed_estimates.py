"""Assumed gears with estimates (``gearing.assumed``): their mass, length and price count in the totals,
the limits and the ranking, and are marked as estimates in the notes, a column, --explain and the export."""
from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from catalog.cli import cli

QUERIES = Path(__file__).resolve().parents[2] / "queries"
ESTIMATES = {"mass_per_stage": "60 g", "length_per_stage": "15 mm", "price": 40}


def _lift(keys, assumed=None, **constraints):
    d = tomllib.loads((QUERIES / "lift_axis.toml").read_text(encoding="utf-8"))
    d["ranking"] = {"keys": keys, "top": 300}
    if assumed:
        d["gearing"]["assumed"] = dict(assumed)
    d.setdefault("constraints", {}).update(constraints)
    return d


def _stages(ratio):
    """One stage per factor 7 of ratio (catalog.select.candidates, common practice)."""
    return max(1, math.ceil(math.log(ratio) / math.log(7.0) - 1e-9))


def test_totals_hold_the_estimates(demo_catalog):
    sel = demo_catalog.select(_lift(["mass"], ESTIMATES))
    motors = demo_catalog.motors().set_index("id")
    t = sel.table
    assumed = t[t["candidate"].str.contains("@")]
    assert len(assumed)
    for r in assumed.itertuples():
        stages = _stages(r.ratio)          # 20, 30 -> 2 stages; 50, 70 -> 3
        m = motors.loc[r.motor]
        assert r.mass == pytest.approx(m["mass"] + 0.060 * stages, rel=1e-12, nan_ok=True)
        if not np.isnan(m["price"]):
            assert r.price == pytest.approx(m["price"] + 40.0, rel=1e-12)
        assert r.estimates == "mass, length, price"
        assert "mass, length, price include estimates (gearing.assumed)" in r.notes
    real = t[~t["candidate"].str.contains("@")]
    assert (real["estimates"] == "").all()
    assert not real["notes"].str.contains("estimates").any()


def test_estimates_change_the_ranking_by_mass_and_price(demo_catalog):
    for key in ("mass", "price"):
        before = demo_catalog.select(_lift([key])).passing
        after = demo_catalog.select(_lift([key], ESTIMATES)).passing
        real = lambda p: p[~p["candidate"].str.contains("@")]    # noqa: E731  a motor and a gearhead
        # without estimates an assumed gear adds nothing and outranks every real pair of the same motor
        best_real = real(before).iloc[0]
        best_real_after = real(after).set_index("candidate").loc[best_real["candidate"]]
        assert best_real_after["rank"] < best_real["rank"]
        # the ranking is by the totals that hold the estimates
        values = after[key].to_numpy(dtype=float)
        known = values[~np.isnan(values)]
        assert np.all(np.diff(known) >= 0) and np.all(np.isnan(values[len(known):]))   # missing last
    # by mass the best real pair (about 104 g) now beats every assumed gear (a motor plus at least 120 g)
    after = demo_catalog.select(_lift(["mass"], ESTIMATES)).passing
    assert "@" not in after["candidate"].iloc[0]


def test_estimates_count_in_the_limits(demo_catalog):
    plain = demo_catalog.select(_lift(["mass"], max_mass="200 g", max_length="120 mm"))
    est = demo_catalog.select(_lift(["mass"], ESTIMATES, max_mass="200 g", max_length="120 mm"))
    t = est.table
    assumed = t[t["candidate"].str.contains("@")]
    heavy = assumed["mass"] > 0.200
    assert heavy.any()
    assert all("mass" in f.split(", ") for f in assumed.loc[heavy, "failed"])
    assert est.counts[0] < plain.counts[0]
    long_ = assumed["length"] > 0.120
    assert all("length" in f.split(", ") for f in assumed.loc[long_, "failed"])


def test_marked_in_cli_explain_and_export(demo_catalog, tmp_path):
    import openpyxl

    text = (QUERIES / "lift_axis.toml").read_text(encoding="utf-8")
    text = text.replace("[gearing]\n", '[gearing]\nassumed = { mass_per_stage = "60 g", length_per_stage = '
                                        '"15 mm", price = 40 }\n', 1)
    env = tmp_path / "lift.toml"
    env.write_text(text, encoding="utf-8")
    out = tmp_path / "lift.xlsx"
    r = CliRunner().invoke(cli, ["--db", str(demo_catalog.path), "select", str(env), "--out", str(out)],
                           catch_exceptions=False)
    assert r.exit_code == 0, r.output
    assert "estimated" in r.output and "mass, length, price" in r.output
    wb = openpyxl.load_workbook(out)
    headers = [c.value for c in wb["shortlist"][1]]
    assert "estimates" in headers
    col = headers.index("estimates")
    assert any(row[col].value == "mass, length, price" for row in wb["shortlist"].iter_rows(min_row=2))
    sel = demo_catalog.select(env)
    first = next(c for c in sel.shortlist["candidate"] if "@" in c)
    assert "estimated (gearing.assumed): mass, length, price of the assumed gear" in sel.explain(first)
