"""Closest misses: the rejected candidates that fail by the least, and the one number that would make
each failed check pass, verified by selecting again with that number in the envelope."""
from __future__ import annotations

import copy
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from catalog.cli import cli
from catalog.errors import InputError
from catalog.select import select
from catalog.select.misses import MISS_COLUMNS, RATIO_DEPENDENT

QUERIES = Path(__file__).resolve().parents[2] / "queries"


def _toml(name):
    return tomllib.loads((QUERIES / name).read_text(encoding="utf-8"))


def _again(cat, data, motor, gear=None):
    """Select again with the envelope ``data``, only the motor (and gearhead) of one miss."""
    motors = cat.motors()
    gears = cat.gearheads()
    gears = gears[gears["id"] == gear] if gear is not None else gears.iloc[0:0]
    return select(motors[motors["id"] == motor], gears, data)


def _row(sel, candidate):
    t = sel.table
    hit = t[t["candidate"] == candidate]
    assert len(hit) == 1, candidate
    return hit.iloc[0]


def _gear_of(miss):
    return miss["gear"] if "+" in miss["candidate"] else None


def _quantity(text):
    return float(text.split()[0])


def _verify(cat, name, miss):
    """Every suggestion of one miss, applied to the envelope, makes its check pass; returns what was checked."""
    base = _toml(name)
    failed = miss["failed"].split(", ")
    checked = set()
    if np.isfinite(miss["min_voltage_needed"]):
        data = copy.deepcopy(base)
        v = miss["min_voltage_needed"]
        data["supply"]["min_voltage"] = f"{v!r} V"
        data["supply"]["nominal_voltage"] = f"{max(v, _quantity(base['supply']['nominal_voltage']))!r} V"
        row = _row(_again(cat, data, miss["motor"], _gear_of(miss)), miss["candidate"])
        assert "voltage" not in row["failed"].split(", "), (miss["candidate"], row["reasons"])
        checked.add("voltage")
    for key, check in (("drive_peak_current_needed", "peak_current"),
                       ("drive_continuous_current_needed", "rms_current")):
        if np.isfinite(miss[key]):
            data = copy.deepcopy(base)
            i = miss[key]
            data["supply"][key.removesuffix("_needed")] = f"{i!r} A"
            if check == "rms_current":   # a drive's peak is at least its continuous current
                peak = _quantity(base["supply"].get("drive_peak_current", "0 A"))
                data["supply"]["drive_peak_current"] = f"{max(i, peak)!r} A"
            row = _row(_again(cat, data, miss["motor"], _gear_of(miss)), miss["candidate"])
            assert check not in row["failed"].split(", "), (miss["candidate"], row["reasons"])
            checked.add(check)
    if np.isfinite(miss["temperature_missing"]):
        assert "temperature" in failed
        data = copy.deepcopy(base)
        required = _quantity(base.get("constraints", {}).get("margins", {}).get("temperature", "0 K"))
        lowered = required - miss["temperature_missing"]
        if lowered >= 0:
            data.setdefault("constraints", {}).setdefault("margins", {})["temperature"] = f"{lowered!r} K"
            row = _row(_again(cat, data, miss["motor"], _gear_of(miss)), miss["candidate"])
            assert "temperature" not in row["failed"].split(", "), (miss["candidate"], row["reasons"])
        checked.add("temperature")
    if np.isfinite(miss["ratio_that_would_do"]):
        data = copy.deepcopy(base)
        x = miss["ratio_that_would_do"]
        gearing = {k: v for k, v in base.get("gearing", {}).items() if k not in ("ratio_range", "ratios")}
        data["gearing"] = {**gearing, "direct": False, "catalogue": False, "ratios": [x]}
        sel = _again(cat, data, miss["motor"])
        t = sel.table
        assert len(t) == 1 and t["ratio"].iloc[0] == x
        now = set(t["failed"].iloc[0].split(", "))
        assert not now & set(RATIO_DEPENDENT), (miss["candidate"], x, t["reasons"].iloc[0])
        checked.add("ratio")
    return checked


def test_impossible_misses_each_suggestion_verified(demo_catalog):
    sel = demo_catalog.select(QUERIES / "impossible.toml", misses=8)
    assert sel.counts[0] == 0
    misses = sel.misses()
    assert list(misses.columns) == MISS_COLUMNS and len(misses) == 8
    # ordered by the summed shortfall; a longer list starts with the shorter one
    assert np.all(np.diff(misses["shortfall"].to_numpy()) >= 0)
    more = sel.misses(20)
    assert list(more["candidate"][:8]) == list(misses["candidate"])
    assert more["shortfall"].iloc[8:].min() >= misses["shortfall"].max()
    # every listed miss failed, and its failed checks are what the rejected table says
    rejected = sel.rejected.set_index("candidate")
    for m in misses.itertuples():
        assert rejected.loc[m.candidate, "failed"] == m.failed
    done = set()
    for _, miss in misses.iterrows():
        done |= _verify(demo_catalog, "impossible.toml", miss)
    assert {"voltage", "rms_current", "temperature"} <= done


def test_ratio_suggestions_verified(demo_catalog):
    sel = demo_catalog.select(QUERIES / "lift_axis.toml", misses=6)
    misses = sel.misses()
    assert len(misses) == 6 and sel.counts[0] > 0
    done = set()
    for _, miss in misses.iterrows():
        done |= _verify(demo_catalog, "lift_axis.toml", miss)
    assert "ratio" in done and "voltage" in done


def test_voltage_shortfall_by_hand(hand_catalog, envelope_file):
    # test_hand_cases: HOTV at 0.2 N*m and 200 rad/s needs 22.20 V hot against 22.1 V available:
    # margin (22.1 - 22.20)/22.1 = -0.45 %, short by 0.45 % with no required margin; 22.2 V would do
    env = envelope_file("""
        name = "hand"
        [supply]
        nominal_voltage = "24 V"
        min_voltage = "22.1 V"
        [environment]
        ambient_temperature = "25 degC"
        [gearing]
        direct = true
        catalogue = false
        [[points]]
        name = "run"
        torque = "0.2 N*m"
        speed = "200 rad/s"
        kind = "continuous"
    """)
    sel = hand_catalog.select(env, misses=3)
    misses = sel.misses().set_index("candidate")
    hotv = misses.loc["hand-hotv"]
    assert hotv["failed"] == "voltage"
    margin = sel.table.set_index("candidate").loc["hand-hotv", "voltage_margin"]
    assert hotv["shortfall"] == pytest.approx(-margin, rel=1e-12)
    assert hotv["shortfall"] == pytest.approx((22.20 - 22.1) / 22.1, abs=3e-4)
    need = 22.1 * (1 - margin)            # 22.20x V: rounded up to three digits
    assert need == pytest.approx(22.20, abs=0.01)
    assert hotv["min_voltage_needed"] == pytest.approx(math.ceil(need * 10) / 10)
    assert f"supply.min_voltage {math.ceil(need * 10) / 10:g} V would do" in hotv["suggestions"]


def test_cli_lists_misses_and_exports_them(demo_catalog, tmp_path):
    out = tmp_path / "imp.xlsx"
    r = CliRunner().invoke(cli, ["--db", str(demo_catalog.path), "select", str(QUERIES / "impossible.toml"),
                                 "--out", str(out)], catch_exceptions=False)
    assert r.exit_code == 1, r.output
    assert "closest misses (5;" in r.output and "supply.min_voltage" in r.output
    import openpyxl

    wb = openpyxl.load_workbook(out)
    assert "closest misses" in wb.sheetnames
    headers = [c.value for c in wb["closest misses"][1]]
    assert "min_voltage_needed [V]" in headers and "temperature_missing [K]" in headers
    assert wb["closest misses"].max_row == 6
    # a selection with passing candidates lists misses only when asked
    r = CliRunner().invoke(cli, ["--db", str(demo_catalog.path), "select", str(QUERIES / "lift_axis.toml")])
    assert "closest misses" not in r.output
    r = CliRunner().invoke(cli, ["--db", str(demo_catalog.path), "select", str(QUERIES / "lift_axis.toml"),
                                 "--misses", "2"])
    assert "closest misses (2;" in r.output


@pytest.mark.parametrize("bad", [0, -3])
def test_misses_below_one_is_one_line(demo_catalog, bad):
    with pytest.raises(InputError, match="misses: .* is not allowed, expected a whole number of at least 1"):
        demo_catalog.select(QUERIES / "lift_axis.toml", misses=bad)
    r = CliRunner().invoke(cli, ["--db", str(demo_catalog.path), "select", str(QUERIES / "lift_axis.toml"),
                                 "--misses", str(bad)])
    assert r.exit_code == 2
    errors = [line for line in r.output.splitlines() if line.startswith("error:")]
    assert errors == [f"error: misses: {bad} is not allowed, expected a whole number of at least 1"]
    assert "Traceback" not in r.output
    sel = demo_catalog.select(QUERIES / "lift_axis.toml")
    with pytest.raises(InputError):
        sel.misses(bad)
