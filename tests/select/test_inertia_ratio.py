"""The load-to-motor inertia ratio: a column of every selection and the optional limit
``constraints.max_inertia_ratio``, checked against hand calculations on the hand catalogue.

Hand catalogue (conftest): every motor has a rotor inertia of 10 g·cm² = 1e-6 kg·m², the gearhead
GH10 (ratio 10) 0.001 g·cm² = 1e-10 kg·m² at its input.  Ratio = (J_load/n²)/(J_rotor + J_gear)
(textbook on drive engineering: inertia referred through a gear, J/n²).
"""
from __future__ import annotations

import numpy as np
import pytest
from click.testing import CliRunner

from catalog.cli import cli

J_ROTOR = 10e-7          # 10 g·cm² [kg·m²]
J_GH10 = 0.001e-7        # 0.001 g·cm² [kg·m²]

ENVELOPE = """
name = "inertia"
[supply]
nominal_voltage = "24 V"
drive_continuous_current = "10 A"
[environment]
ambient_temperature = "25 degC"
{load}
[gearing]
direct = true
catalogue = true
ratios = [20]
{constraints}
{motion}
"""
CYCLE = """
[cycle]
[[cycle.segments]]
name = "spin up"
duration = "1 s"
torque = "0.01 N*m"
speed_start = "0 rpm"
speed_end = "30 rpm"
[[cycle.segments]]
name = "coast"
duration = "1 s"
torque = "0.01 N*m"
speed_start = "30 rpm"
"""


def row(sel, candidate):
    t = sel.table
    return t[t["candidate"] == candidate].iloc[0]


def test_ratio_by_hand_with_load_inertia(hand_catalog, envelope_file):
    env = envelope_file(ENVELOPE.format(load='[load]\ninertia = "0.002 kg*m^2"', constraints="", motion=CYCLE))
    sel = hand_catalog.select(env)
    # direct: 0.002 / 1 / 1e-6 = 2000; GH10: 0.002/100/(1e-6 + 1e-10) = 19.998; assumed 20 (no gear
    # inertia given): 0.002/400/1e-6 = 5
    assert row(sel, "hand-hotv")["inertia_ratio"] == pytest.approx(2000.0, rel=1e-12)
    assert row(sel, "hand-gear+hand-gh10")["inertia_ratio"] == pytest.approx(0.002 / 100 / (J_ROTOR + J_GH10),
                                                                            rel=1e-12)
    assert row(sel, "hand-gear+hand-gh10")["inertia_ratio"] == pytest.approx(19.998, rel=1e-4)
    assert row(sel, "hand-hotv@ratio-20.0")["inertia_ratio"] == pytest.approx(5.0, rel=1e-12)
    # a column of every selection, its margin not checked without a limit
    assert "inertia_ratio" in sel.shortlist.columns
    assert sel.table["inertia_ratio_margin"].isna().all()
    assert "inertia_ratio" not in sel.reason_counts()


def test_ratio_by_hand_with_a_mechanism(hand_catalog, envelope_file):
    # a drum of radius 50 mm lifting 4 kg: J = m·r² = 4 * 0.05² = 0.01 kg·m² plus the drum's own 0.002
    # (reflected-inertia rule, textbook); assumed ratio 20 with gear inertia 1 g·cm² = 1e-7 kg·m²
    load = ('[load.mechanism]\nkind = "drum"\nradius = "50 mm"\nmass = "4 kg"\nefficiency = 0.9\n'
            'inertia = "0.002 kg*m^2"')
    moves = '[[motion.moves]]\nname = "lift"\ndistance = "0.1 m"\ntime = "2 s"\ndwell = "1 s"\n'
    text = ENVELOPE.format(load=load, constraints="", motion=moves).replace(
        "ratios = [20]", 'ratios = [20]\ninertia = "1 g*cm^2"')
    sel = hand_catalog.select(envelope_file(text))
    assert sel.envelope.output_inertia == pytest.approx(0.012, rel=1e-12)
    assert row(sel, "hand-hotv@ratio-20.0")["inertia_ratio"] == pytest.approx(0.012 / 400 / (J_ROTOR + 1e-7),
                                                                             rel=1e-12)
    # the mechanism's inertia is in the torques once: the evaluation adds no load.inertia on top
    assert sel.envelope.load_inertia == 0.0


def test_limit_rejects_above_and_keeps_below(hand_catalog, envelope_file):
    env = envelope_file(ENVELOPE.format(load='[load]\ninertia = "0.002 kg*m^2"',
                                        constraints="[constraints]\nmax_inertia_ratio = 10", motion=CYCLE))
    sel = hand_catalog.select(env)
    t = sel.table
    over = t["inertia_ratio"] > 10
    assert over.any() and (~over).any()
    assert all("inertia_ratio" in f.split(", ") for f in t.loc[over, "failed"])
    assert not any("inertia_ratio" in f.split(", ") for f in t.loc[~over, "failed"])
    r = row(sel, "hand-hotv")
    assert "load-to-motor inertia ratio 2e+03 > 10" in r["reasons"]
    # margin (limit − value)/limit
    np.testing.assert_allclose(t["inertia_ratio_margin"], (10 - t["inertia_ratio"]) / 10, rtol=1e-12)
    assert row(sel, "hand-hotv@ratio-20.0")["inertia_ratio_margin"] == pytest.approx(0.5, rel=1e-12)
    assert "inertia_ratio" in sel.explain("hand-hotv@ratio-20.0")


def test_cli_shows_the_ratio(hand_catalog, envelope_file):
    env = envelope_file(ENVELOPE.format(load='[load]\ninertia = "0.002 kg*m^2"', constraints="", motion=CYCLE))
    r = CliRunner().invoke(cli, ["--db", str(hand_catalog.path), "select", str(env)], catch_exceptions=False)
    assert r.exit_code == 0, r.output
    assert "inertia_ratio" in r.output
    assert "Jratio %" not in r.output      # no limit: no margin column


def test_bad_limit_is_one_line(hand_catalog, envelope_file):
    env = envelope_file(ENVELOPE.format(load="", constraints="[constraints]\nmax_inertia_ratio = -1",
                                        motion=CYCLE))
    r = CliRunner().invoke(cli, ["--db", str(hand_catalog.path), "select", str(env)])
    assert r.exit_code == 2
    assert "constraints.max_inertia_ratio: -1 is out of range, expected above 0" in r.output
