"""The check registry: every list of checks is generated from it, and a new check is one entry.

The example check below (a maximum load-to-motor inertia ratio) lives in this
file only: registering it must make the verdicts, the shortlist, the command
line, ``--explain``, the spreadsheet columns and the rejection-count meanings
show it with no other edit.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from catalog.cli import cli
from catalog.select import CHECKS, Check, Margin, register, unregister
from catalog.select.registry import checks, margin_columns

QUERIES = Path(__file__).resolve().parents[2] / "queries"
LIMIT = 3.0   # an example limit of load inertia seen by the motor over motor-side inertia [1]


def _inertia_ratio(x):
    """Reflected load inertia J_load/n² over rotor plus gear inertia (textbook reflected-inertia rule)."""
    motor_side = x.c["rotor_inertia"] + x.c["gear_inertia"]
    return x.env.output_inertia / x.c["ratio"] ** 2 / motor_side   # the mechanism's or load.inertia


EXAMPLE = Check(
    "example_inertia_ratio", "load-to-motor inertia ratio above the example limit",
    margin=Margin("example_inertia_ratio_margin", required=None, label="Jratio %"),
    needs=("rotor_inertia", "gear_inertia", "ratio"),
    compute=lambda x: (LIMIT - _inertia_ratio(x)) / LIMIT,
    columns={"example_inertia_ratio": (_inertia_ratio, None)},
    reason=lambda x, m: "inertia ratio " + x.fmt(_inertia_ratio(x)) + f" > {LIMIT:g}")


@pytest.fixture
def example_check():
    register(EXAMPLE)
    try:
        yield EXAMPLE
    finally:
        unregister(EXAMPLE.key)


def test_registry_lists_every_check_once():
    keys = [c.key for c in checks()]
    assert len(keys) == len(set(keys))
    assert list(CHECKS) == keys
    assert margin_columns()[-1] == "smallest_margin"
    with pytest.raises(ValueError, match="registered already"):
        register(checks()[0])


def test_new_check_reaches_verdicts_shortlist_and_explain(demo_catalog, example_check):
    sel = demo_catalog.select(QUERIES / "lift_axis.toml")
    table = sel.table
    ratio = table["example_inertia_ratio"].to_numpy(dtype=float)
    fails = ~table["passed"].to_numpy() & (ratio > LIMIT)
    # every candidate over the limit is rejected by the new check, with its number in the reason
    over = table[ratio > LIMIT]
    assert len(over) and not over["passed"].any()
    assert all("example_inertia_ratio" in f.split(", ") for f in over["failed"])
    assert all("inertia ratio " in r for r in over["reasons"])
    assert fails.sum() == sel.reason_counts()["example_inertia_ratio"]
    # passing candidates keep it within the limit, and the shortlist shows margin and value
    assert (sel.shortlist["example_inertia_ratio"] <= LIMIT).all()
    np.testing.assert_allclose(sel.shortlist["example_inertia_ratio_margin"],
                               (LIMIT - sel.shortlist["example_inertia_ratio"]) / LIMIT, rtol=1e-12)
    text = sel.explain(sel.shortlist["candidate"].iloc[0])
    assert "    example_inertia_ratio_margin" in text
    assert "    example_inertia_ratio " in text


def test_new_check_reaches_cli_and_spreadsheet(demo_catalog, example_check, tmp_path):
    import openpyxl

    out = tmp_path / "lift.xlsx"
    r = CliRunner().invoke(cli, ["--db", str(demo_catalog.path), "select", str(QUERIES / "lift_axis.toml"),
                                 "--out", str(out)], catch_exceptions=False)
    assert r.exit_code == 0, r.output
    assert "Jratio %" in r.output
    assert "example_inertia_ratio: load-to-motor inertia ratio above the example limit" in r.output
    wb = openpyxl.load_workbook(out)
    headers = [c.value for c in wb["shortlist"][1]]
    assert "example_inertia_ratio_margin [%]" in headers or "example_inertia_ratio_margin [1]" in headers
    counts = [[c.value for c in row] for row in wb["rejection counts"].iter_rows()]
    assert ["example_inertia_ratio", "load-to-motor inertia ratio above the example limit"] in \
        [row[:2] for row in counts]


def test_without_the_check_nothing_mentions_it(demo_catalog):
    sel = demo_catalog.select(QUERIES / "lift_axis.toml")
    assert "example_inertia_ratio" not in sel.shortlist.columns
    assert "example_inertia_ratio" not in CHECKS
