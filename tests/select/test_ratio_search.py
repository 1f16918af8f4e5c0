"""Ratio search against inertia matching: n* = sqrt(J_load/J_motor) minimises RMS motor torque
for a pure inertial load (textbook on drive engineering / servo drives, inertia matching;
catalog.physics.optimal_ratio_inertial)."""
from __future__ import annotations

import numpy as np
import pytest

ENVELOPE = """
name = "inertial"
[supply]
nominal_voltage = "1000 V"
[environment]
ambient_temperature = "25 degC"
[load]
inertia = "{jl} kg*m^2"
[cycle]
[[cycle.segments]]
name = "speed up"
duration = "0.1 s"
torque = "0 N*m"
speed_start = "0 rpm"
speed_end = "10 rpm"
[[cycle.segments]]
name = "slow down"
duration = "0.1 s"
torque = "0 N*m"
speed_start = "10 rpm"
speed_end = "0 rpm"
[gearing]
direct = false
catalogue = false
ratio_range = {{ min = 2, max = 200, steps = 300 }}
stage_efficiency = 1.0
"""


def test_search_finds_inertia_matching_ratio(hand_catalog, envelope_file):
    j_motor = 1e-6          # HOTV rotor: 10 g*cm^2; no friction; eta = 1
    j_load = 4e-3           # -> n* = sqrt(4e-3 / 1e-6) = 63.2
    sel = hand_catalog.select(envelope_file(ENVELOPE.format(jl=j_load)))
    t = sel.table[sel.table["motor"] == "hand-hotv"]
    best = t.loc[t["rms_current"].idxmin(), "ratio"]
    expected = np.sqrt(j_load / j_motor)
    assert best == pytest.approx(expected, rel=0.03)   # log grid step is 1.6 %
