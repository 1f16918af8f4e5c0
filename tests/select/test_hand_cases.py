"""Hand-worked verdicts on a three-motor synthetic catalogue (see conftest.MOTORS).

Every motor: R = 1 ohm, Kt = Ke = 0.1 N*m/A at 25 degC, no friction, AlNiCo
magnet beta = -0.0002 /K.  Ambient 25 degC, so 'cold' means the datasheet
values.  The hot fixed point is recomputed here by hand with the scalar closed
form of the two-node steady state:

    Tw - Ta = I^2 * R(Ta) * Rth / (1 - I^2 * R * alpha_ref * Rth),   Rth = Rth1 + Rth2
    alpha_ref = alpha20 / (1 + alpha20 * 5 K),   alpha20 = 0.00393 /K  (IEC 60028)
    Kt(Tw) = Kt * (1 + beta * (Tw - 25 degC))     (magnet at winding temperature)
    I = T / Kt(Tw)

Sources: IEC 60028 (copper resistance law), textbook chapter on DC machines
(V = R*I + Ke*w, T = Kt*I), textbook chapter on heating of machines (two-node
network steady state), IEC 60404-8-1 (reversible coefficient of Br).
"""
from __future__ import annotations

import pytest

ALPHA = 0.00393 / (1 + 0.00393 * 5.0)
BETA = -0.0002
TA = 298.15

POINTS = """
name = "hand"
[supply]
nominal_voltage = "24 V"
min_voltage = "{vmin}"
{drive}
[environment]
ambient_temperature = "25 degC"
[gearing]
direct = {direct}
catalogue = {catalogue}
{points}
"""


def point(name, torque, speed, kind="continuous"):
    return f'[[points]]\nname = "{name}"\ntorque = "{torque}"\nspeed = "{speed}"\nkind = "{kind}"\n'


def hand_fixed_point(torque, rth, r=1.0, kt=0.1):
    """Scalar fixed point of winding temperature and current (hand iteration)."""
    tw = TA
    for _ in range(200):
        current = torque / (kt * (1 + BETA * (tw - TA)))
        loss_gain = current ** 2 * r * ALPHA * rth
        new = TA + current ** 2 * r * rth / (1 - loss_gain)
        if abs(new - tw) < 1e-6:
            break
        tw = new
    return tw, torque / (kt * (1 + BETA * (tw - TA)))


def row(sel, candidate):
    t = sel.table
    return t[t["candidate"] == candidate].iloc[0]


def failed(sel, candidate):
    return row(sel, candidate)["failed"]


def test_fails_only_on_voltage_once_hot(hand_catalog, envelope_file):
    # HOTV, 0.2 N*m at 200 rad/s, Rth = 3 + 7 = 10 K/W.
    # cold: I = 2 A, V = 1*2 + 0.1*200 = 22.0 V  < 22.1 V available -> would pass
    # hot:  Tw ~ 25 + 47.6 = 72.6 degC, R = 1.183 ohm, Kt = Ke = 0.09905,
    #       I = 2.019 A, V = 1.183*2.019 + 0.09905*200 = 22.20 V > 22.1 V -> fails
    env = envelope_file(POINTS.format(vmin="22.1 V", drive="", direct="true", catalogue="false",
                                      points=point("run", "0.2 N*m", "200 rad/s")))
    sel = hand_catalog.select(env)
    tw, current = hand_fixed_point(0.2, 10.0)
    r_hot = 1 + ALPHA * (tw - TA)
    v_hot = r_hot * current + 0.1 * (1 + BETA * (tw - TA)) * 200
    assert v_hot == pytest.approx(22.20, abs=0.01)
    assert 2.0 + 20.0 < 22.1 < v_hot                       # passes cold, fails hot
    r = row(sel, "hand-hotv")
    assert r["failed"] == "voltage"
    assert r["winding_temperature"] == pytest.approx(tw, abs=0.05)
    assert r["voltage_margin"] == pytest.approx((22.1 - v_hot) / 22.1, abs=1e-4)
    assert "needs 22.2 V at 1910 rpm (hot), has 22.1 V after the drive drop" in r["reasons"]


def test_fails_only_on_temperature(hand_catalog, envelope_file):
    # HEAT: Rth = 6 + 14 = 20 K/W, limit 130 degC; 0.2 N*m at 100 rad/s.
    # I ~ 2 A: Tw - Ta = 4*20/(1 - 4*0.003854*20) = 115.7 K before the Kt drop;
    # with Kt falling 2.5 % the fixed point is ~ 126 K -> about 151 degC > 130 degC.
    # Voltage: about 1.49*2.05 + 0.0975*100 = 12.8 V, far below 22.1 V.
    env = envelope_file(POINTS.format(vmin="22.1 V", drive="", direct="true", catalogue="false",
                                      points=point("run", "0.2 N*m", "100 rad/s")))
    sel = hand_catalog.select(env)
    tw, _ = hand_fixed_point(0.2, 20.0)
    assert tw - 273.15 > 140
    r = row(sel, "hand-heat")
    assert r["failed"] == "temperature"
    assert r["winding_temperature"] == pytest.approx(tw, abs=0.05)
    assert r["temperature_margin"] == pytest.approx(403.15 - tw, abs=0.05)
    assert f"winding reaches {tw - 273.15:.0f} °C, limit 130 °C" in r["reasons"]


def test_fails_only_on_gearhead_torque(hand_catalog, envelope_file):
    # GEAR + GH10 (n = 10, eta = 0.8, continuous 1.0 N*m, intermittent 1.5 N*m):
    # 1.2 N*m at 10 rad/s continuously -> gear output 1.2 N*m: continuous margin
    # (1.0 - 1.2)/1.0 = -20 %, intermittent (1.5 - 1.2)/1.5 = +20 %.
    # Motor: 1.2/(10*0.8) = 0.15 N*m, I ~ 1.5 A, V ~ 1.1*1.5 + 0.1*100 = 11.7 V.
    env = envelope_file(POINTS.format(vmin="22.1 V", drive="", direct="false", catalogue="true",
                                      points=point("hold", "1.2 N*m", "10 rad/s")))
    sel = hand_catalog.select(env)
    r = row(sel, "hand-gear+hand-gh10")
    assert r["failed"] == "gear_continuous_torque"
    assert r["gear_continuous_torque_margin"] == pytest.approx(-0.2)
    assert r["gear_peak_torque_margin"] == pytest.approx(0.2)
    assert r["rms_current"] == pytest.approx(hand_fixed_point(0.15, 10.0)[1], rel=1e-4)
    assert "continuous gearhead output 1.2 N·m, continuous rating 1 N·m" in r["reasons"]


def test_fails_only_on_drive_peak_current(hand_catalog, envelope_file):
    # HOTV, continuous 0.05 N*m at 100 rad/s (0.5 A: Tw rises 2.5 K), peak
    # 0.5 N*m at 10 rad/s -> I = 0.5/Kt(27.5 degC) = 5.0025 A > 4 A peak limit:
    # margin (4 - 5.0025)/4 = -25.06 %.  V at the peak = 1.01*5 + 1 = 6 V.
    drive = 'drive_continuous_current = "2 A"\ndrive_peak_current = "4 A"'
    pts = point("idle", "0.05 N*m", "100 rad/s") + point("kick", "0.5 N*m", "10 rad/s", "peak")
    env = envelope_file(POINTS.format(vmin="22.1 V", drive=drive, direct="true", catalogue="false",
                                      points=pts))
    sel = hand_catalog.select(env)
    tw, _ = hand_fixed_point(0.05, 10.0)
    peak = 0.5 / (0.1 * (1 + BETA * (tw - TA)))
    r = row(sel, "hand-hotv")
    assert r["failed"] == "peak_current"
    assert r["peak_current"] == pytest.approx(peak, rel=1e-5)
    assert r["peak_current_margin"] == pytest.approx((4 - peak) / 4, rel=1e-4)
    assert "segment kick: needs 5 A, drive gives 4 A peak" in r["reasons"]


CYCLE = """
name = "mast"
[supply]
nominal_voltage = "24 V"
min_voltage = "23.5 V"
[environment]
ambient_temperature = "25 degC"
[gearing]
direct = true
catalogue = false
[cycle]
[[cycle.segments]]
name = "move"
duration = "10 s"
torque = "0.2 N*m"
speed_start = "{speed}"
"""


def test_passes_only_because_the_load_drives_it_when_lowering(hand_catalog, envelope_file):
    # HOTV holding 0.2 N*m of gravity (I = +2 A) while the load turns it at -250 rad/s:
    # power flows from the load, the motor generates and V = R*I + Ke*w = 2 - 25 = -23 V,
    # |V| = 23.0 V (cold corner; hot: 1.18*2.02 - 0.099*250 = -22.4 V) < 23.5 V: passes,
    # margin (23.5 - 23)/23.5 = 2.13 %.  Raising at +250 rad/s needs 2 + 25 = 27 V
    # cold, 27.2 V hot: fails, and counting |I|*R + Ke*|w| for lowering would fail too.
    lower = hand_catalog.select(envelope_file(CYCLE.format(speed="-250 rad/s"), "lower.toml"))
    r = row(lower, "hand-hotv")
    assert r["passed"], r["reasons"]
    assert r["voltage_margin"] == pytest.approx((23.5 - 23.0) / 23.5, abs=1e-6)
    raise_ = hand_catalog.select(envelope_file(CYCLE.format(speed="250 rad/s"), "raise.toml"))
    r = row(raise_, "hand-hotv")
    assert r["failed"] == "voltage"
    tw, current = hand_fixed_point(0.2, 10.0)
    v_hot = (1 + ALPHA * (tw - TA)) * current + 0.1 * (1 + BETA * (tw - TA)) * 250
    assert r["voltage_margin"] == pytest.approx((23.5 - v_hot) / 23.5, abs=1e-4)


def test_back_drive_efficiency_through_a_gear(hand_catalog, envelope_file):
    # GEAR + GH10, lowering 1.0 N*m at -10 rad/s: load drives, T_motor = 1.0*0.8/10 = 0.08 N*m
    # (back_drive = true) instead of 1.0/(10*0.8) = 0.125 N*m (back_drive = false).
    text = CYCLE.format(speed="-10 rad/s").replace('torque = "0.2 N*m"', 'torque = "1.0 N*m"')
    text = text.replace("direct = true\ncatalogue = false", "direct = false\ncatalogue = true")
    on = hand_catalog.select(envelope_file(text + "[load]\nback_drive = true\n", "on.toml"))
    off = hand_catalog.select(envelope_file(text + "[load]\nback_drive = false\n", "off.toml"))
    cid = "hand-gear+hand-gh10"
    assert row(on, cid)["rms_current"] == pytest.approx(hand_fixed_point(0.08, 10.0)[1], rel=1e-4)
    assert row(off, cid)["rms_current"] == pytest.approx(hand_fixed_point(0.125, 10.0)[1], rel=1e-4)


def test_missing_thermal_data_is_a_reason(demo_catalog):
    # The demo's brackwater motors state no thermal resistances: never a silent pass.
    sel = demo_catalog.select(str(ROOT_QUERIES / "water_pump.toml"))
    t = sel.table
    r = t[t["motor"].str.contains("bx2240-12")].iloc[0]
    assert not r["passed"]
    assert "thermal_data" in r["failed"]
    assert "no thermal data: cannot check temperature" in r["reasons"]


from pathlib import Path  # noqa: E402

ROOT_QUERIES = Path(__file__).resolve().parents[2] / "queries"
