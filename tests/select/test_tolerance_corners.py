"""Symmetric tolerances: every check is judged at the end of the band that hurts it (hand-worked cases).

The hand catalogue's HOTV (conftest.MOTORS): R = 1 Ω, Kt = Ke = 0.1 N·m/A at
25 °C, no friction.  The points below are peak points at 25 °C ambient, so the
winding stays at ambient (no continuous load heats it) and the datasheet
values hold except for the tolerance.  DC machine equations (textbook chapter
on DC machines): I = T/Kt, V = R·I + Ke·ω with Kt = Ke in SI.
"""
from __future__ import annotations

import pytest

from catalog.errors import InputError
from catalog.select import load_envelope

ENVELOPE = """
name = "corners"
[supply]
nominal_voltage = "30 V"
min_voltage = "{vmin}"
{drive}
[environment]
ambient_temperature = "25 degC"
[constraints]
tolerance = {{ {tolerance} }}
[gearing]
direct = true
catalogue = false
[[points]]
name = "run"
torque = "{torque}"
speed = "{speed}"
kind = "{kind}"
"""


def envelope(vmin="22 V", drive="", tolerance='torque_constant = "±10 %", terminal_resistance = "±10 %"',
             torque="0.05 N*m", speed="200 rad/s", kind="peak"):
    return ENVELOPE.format(vmin=vmin, drive=drive, tolerance=tolerance, torque=torque, speed=speed, kind=kind)


def row(sel, candidate="hand-hotv"):
    t = sel.table
    return t[t["candidate"] == candidate].iloc[0]


def test_symmetric_tolerances_are_read(envelope_file):
    for text, want in (('"±10 %"', (-0.1, 0.1)), ('"+/- 0.05"', (-0.05, 0.05)), ('"+-7%"', (-0.07, 0.07)),
                       ('"-5 %"', (-0.05, -0.05)), ("0.03", (0.03, 0.03))):
        env = load_envelope(envelope_file(envelope(tolerance=f"torque_constant = {text}")))
        assert env.tolerance["torque_constant"] == pytest.approx(want)
        assert env.tolerance["terminal_resistance"] == (0.0, 0.0)


@pytest.mark.parametrize("text, message", [
    ('"±120 %"', "'±120 %' is out of range, expected a symmetric tolerance of at least 0 and below 100 %"),
    ('"±-5 %"', "'±-5 %' is out of range, expected a symmetric tolerance of at least 0 and below 100 %"),
    ('"±10 V"', "'10 V' is a voltage, expected a ratio"),
])
def test_bad_symmetric_tolerances_are_refused(envelope_file, text, message):
    with pytest.raises(InputError) as err:
        load_envelope(envelope_file(envelope(tolerance=f"terminal_resistance = {text}")))
    [problem] = err.value.problems
    assert problem.field == "constraints.tolerance.terminal_resistance"
    assert message in problem.message


def test_voltage_at_ke_and_r_high(hand_catalog, envelope_file):
    # 0.05 N·m at 200 rad/s.  Datasheet: I = 0.5 A, V = 0.5 + 20 = 20.5 V < 22 V (passes).
    # Kt −10 % as a signed shift (the old reading of a tolerance): I = 0.556 A, V = 0.556 + 18 = 18.6 V.
    # ±10 %: the worst of the four ends is Ke and R high: I = 0.05/0.11 = 0.4545 A,
    # V = 1.1·0.4545 + 0.11·200 = 22.5 V > 22 V (fails); Kt low, R high gives 0.611 + 18 = 18.6 V.
    signed = row(hand_catalog.select(envelope_file(envelope(tolerance='torque_constant = "-10 %"'), "s.toml")))
    assert signed["passed"] and signed["voltage_margin"] == pytest.approx((22 - (0.05 / 0.09 + 18)) / 22)
    sel = hand_catalog.select(envelope_file(envelope()))
    r = row(sel)
    assert r["failed"] == "voltage"
    assert r["voltage_margin"] == pytest.approx((22 - 22.5) / 22, rel=1e-9)
    assert "needs 22.5 V" in r["reasons"]
    text = sel.explain("hand-hotv")
    assert "tolerance corner Kt = Ke +10 %, R +10 %: voltage" in text
    assert ("tolerance corner Kt = Ke −10 %, R +10 %: peak_current, motor_peak_current, rms_current, temperature"
            in text)


def test_voltage_of_a_generating_segment_at_r_low(hand_catalog, envelope_file):
    # The load drives HOTV: +0.2 N·m at −250 rad/s, V = R·I + Ke·ω is negative and |V| = Ke·250 − R·I.
    # Ke high, R high: I = 0.2/0.11 = 1.818 A, |V| = 27.5 − 2.0 = 25.5 V; Ke high, R low: 27.5 − 1.636
    # = 25.86 V, the worst: a low resistance hurts a generating motor.  Available 26 V.
    sel = hand_catalog.select(envelope_file(envelope(vmin="26 V", torque="0.2 N*m", speed="-250 rad/s")))
    r = row(sel)
    need = 0.11 * 250 - 0.9 * 0.2 / 0.11
    assert r["voltage_margin"] == pytest.approx((26 - need) / 26, rel=1e-9)
    assert "tolerance corner Kt = Ke +10 %, R −10 %: voltage" in sel.explain("hand-hotv")


def test_peak_current_at_kt_low(hand_catalog, envelope_file):
    # 0.5 N·m at 10 rad/s: 5.0 A with the datasheet's Kt, 0.5/0.09 = 5.556 A at Kt −10 %: the drive's
    # 5.2 A peak passes the first and fails the second.
    drive = 'drive_continuous_current = "2 A"\ndrive_peak_current = "5.2 A"'
    r = row(hand_catalog.select(envelope_file(envelope(drive=drive, torque="0.5 N*m", speed="10 rad/s"))))
    assert r["failed"] == "peak_current"
    assert r["peak_current"] == pytest.approx(0.5 / 0.09, rel=1e-9)
    assert r["peak_current_margin"] == pytest.approx((5.2 - 0.5 / 0.09) / 5.2, rel=1e-9)


def test_winding_temperature_at_kt_low_and_r_high(hand_catalog, envelope_file):
    # Continuous 0.2 N·m at 100 rad/s, Rth = 3 + 7 = 10 K/W.  Steady state with R(Tw) = 1.1·(1 + α·ΔT)
    # and Kt(Tw) = 0.09·(1 + β·ΔT), α = α20/(1 + α20·5 K) (IEC 60028), β = −0.0002 /K (AlNiCo):
    # ΔT = I²·R(Tw)·Rth, iterated by hand.
    alpha, beta = 0.00393 / (1 + 0.00393 * 5.0), -0.0002
    rise = 0.0
    for _ in range(200):
        current = 0.2 / (0.09 * (1 + beta * rise))
        rise = current ** 2 * 1.1 * (1 + alpha * rise) * 10.0
    r = row(hand_catalog.select(envelope_file(envelope(vmin="24 V", torque="0.2 N*m", speed="100 rad/s",
                                                        kind="continuous"))))
    assert r["winding_temperature"] == pytest.approx(298.15 + rise, abs=0.01)
    assert r["rms_current"] == pytest.approx(0.2 / (0.09 * (1 + beta * rise)), rel=1e-6)
