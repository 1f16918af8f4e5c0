"""Losses beyond copper, the brush voltage drop and the motor's own peak current limit (hand-worked cases).

Every motor: R = 1 Ω, Kt = Ke = 0.1 N·m/A at 25 °C, AlNiCo magnet (β = −0.0002 /K),
Rth1 = 3 K/W, Rth2 = 7 K/W.  Ambient 25 °C.

* No-load loss: friction torque T_f = Kt·I0 at motor speed ω dissipates T_f·ω (the
  power of a torque, textbook mechanics); in the steady state of the two-node
  network a loss entering the winding raises the winding by (Rth1 + Rth2)·P, one
  entering the housing by Rth2·P (the winding is at the housing's temperature
  with no loss of its own): brushed motors heat their rotor (winding) node,
  brushless ones their stator (housing) node.  The copper loss follows
  R(Tw)/Kt(Tw)² (IEC 60028, IEC 60404-8-1); fixed point by hand iteration.
* Brush drop: V = R·I + V_b·sign(I) + Ke·ω (DC machine with brushes, textbook
  chapter on DC machines).
"""
from __future__ import annotations

import numpy as np
import pytest

ALPHA = 0.00393 / (1 + 0.00393 * 5.0)
BETA = -0.0002
TA = 298.15

HEADER = ("manufacturer,part_number,commutation,magnet_material,nominal_voltage [V],terminal_resistance [Ohm],"
          "resistance_reference_temperature [degC],torque_constant [N*m/A],friction_torque [N*m],"
          "rotor_inertia [g*cm^2],thermal_resistance_winding_housing [K/W],thermal_resistance_housing_ambient [K/W],"
          "thermal_time_constant_winding [s],thermal_time_constant_motor [s],max_winding_temperature [degC],"
          "max_speed [rpm],mass [g],brush_voltage_drop [V],max_peak_current [A]\n")
ROWS = [
    # part, commutation, friction torque [N·m], brush drop [V], peak limit [A]
    ("BR", "brushed", 0.01, "", ""),
    ("BL", "brushless", 0.01, "", ""),
    ("BD", "brushed", 0.0, "1.5", ""),
    ("PK", "brushless", 0.0, "", "4"),
]

POINTS = """
name = "losses"
[supply]
nominal_voltage = "48 V"
min_voltage = "{vmin}"
{supply}
[environment]
ambient_temperature = "25 degC"
[gearing]
direct = true
catalogue = false
{points}
"""


def point(name, torque, speed, kind="continuous"):
    return f'[[points]]\nname = "{name}"\ntorque = "{torque}"\nspeed = "{speed}"\nkind = "{kind}"\n'


@pytest.fixture(scope="module")
def loss_catalog(tmp_path_factory):
    import catalog

    folder = tmp_path_factory.mktemp("losses")
    path = folder / "motors.csv"
    path.write_text(HEADER + "".join(
        f"Loss Test,{part},{com},alnico,24,1,25,0.1,{tf},10,3,7,20,600,155,30000,300,{drop},{peak}\n"
        for part, com, tf, drop, peak in ROWS), encoding="utf-8")
    cat = catalog.open(folder / "c.duckdb")
    cat.import_([path])
    return cat


def row(sel, candidate):
    t = sel.table
    return t[t["candidate"] == candidate].iloc[0]


def steady(torque, no_load, node_rth, friction, rth=10.0):
    """Hand fixed point of the winding rise: copper I²·R(Tw) through Rth1 + Rth2, the no-load loss through
    the resistance to ambient of its node."""
    rise = 0.0
    for _ in range(300):
        current = (torque + friction) / (0.1 * (1 + BETA * rise))
        rise = current ** 2 * (1 + ALPHA * rise) * rth + no_load * node_rth
    return rise


def test_no_load_losses_heat_the_node_where_they_arise(loss_catalog, envelope_file):
    # 0.01 N·m at 1000 rad/s: copper (0.02/0.1)² · 1 Ω = 0.04 W, friction 0.01 N·m · 1000 rad/s = 10 W,
    # 250 times the copper loss.  Brushed: the winding rises by about 10 W · 10 K/W = 100 K; brushless:
    # 10 W · 7 K/W = 70 K.
    sel = loss_catalog.select(envelope_file(POINTS.format(vmin="48 V", supply="", points=point(
        "fast", "0.01 N*m", "1000 rad/s"))))
    brushed, brushless = row(sel, "loss-br"), row(sel, "loss-bl")
    assert brushed["winding_temperature"] - TA == pytest.approx(steady(0.01, 10.0, 10.0, 0.01), abs=0.01)
    assert brushless["winding_temperature"] - TA == pytest.approx(steady(0.01, 10.0, 7.0, 0.01), abs=0.01)
    assert brushed["winding_temperature"] - TA > 95 and brushless["winding_temperature"] - TA < 75


def test_brush_drop_in_the_voltage_check(loss_catalog, envelope_file):
    # BD states 1.5 V across its brushes: 0.1 N·m at 200 rad/s needs 1·1 + 1.5 + 0.1·200 = 22.5 V cold
    # (a peak point: the winding stays at ambient).  BR states none: 0 V and a note;
    # with the envelope's default of 0.8 V it needs 0.8 V more.
    env = POINTS.format(vmin="48 V", supply="", points=point("run", "0.1 N*m", "200 rad/s", "peak"))
    sel = loss_catalog.select(envelope_file(env))
    bd = row(sel, "loss-bd")
    assert bd["voltage_margin"] == pytest.approx((48 - 22.5) / 48, rel=1e-9)
    br = row(sel, "loss-br")                       # friction 0.01 N·m: I = 1.1 A
    assert br["voltage_margin"] == pytest.approx((48 - (1.1 + 20.0)) / 48, rel=1e-9)
    assert "brush voltage drop not stated: taken as 0 V" in br["notes"]
    assert "brush voltage drop" not in row(sel, "loss-bl")["notes"]
    default = loss_catalog.select(envelope_file(POINTS.format(vmin="48 V", supply='brush_voltage_drop = "0.8 V"',
                                                              points=point("run", "0.1 N*m", "200 rad/s", "peak")),
                                                "d.toml"))
    assert row(default, "loss-br")["voltage_margin"] == pytest.approx((48 - (1.1 + 0.8 + 20.0)) / 48, rel=1e-9)
    assert "brush voltage drop 0.8 V (envelope default)" in row(default, "loss-br")["notes"]
    assert row(default, "loss-bd")["voltage_margin"] == pytest.approx((48 - 22.5) / 48, rel=1e-9)   # its own
    assert row(default, "loss-bl")["voltage_margin"] == pytest.approx((48 - (1.1 + 20.0)) / 48, rel=1e-9)


def test_brush_drop_of_a_generating_motor(loss_catalog, envelope_file):
    # The load drives BD backwards: +0.1 N·m at −200 rad/s, I = +1 A, V = 1 + 1.5 − 20 = −17.5 V: the brush
    # drop opposes the current, so |V| is 17.5 V, not 20 + 1 + 1.5.
    sel = loss_catalog.select(envelope_file(POINTS.format(vmin="48 V", supply="", points=point(
        "lower", "0.1 N*m", "-200 rad/s", "peak"))))
    assert row(sel, "loss-bd")["voltage_margin"] == pytest.approx((48 - 17.5) / 48, rel=1e-9)


def test_the_motors_own_peak_current_limit(loss_catalog, envelope_file):
    # PK may carry 4 A: 0.45 N·m needs 4.5 A (a peak point, the winding at ambient): margin (4 − 4.5)/4.
    # Motors that state no limit are not checked against one.
    sel = loss_catalog.select(envelope_file(POINTS.format(vmin="48 V", supply="", points=point(
        "kick", "0.45 N*m", "10 rad/s", "peak"))))
    pk = row(sel, "loss-pk")
    assert pk["failed"] == "motor_peak_current"
    assert pk["motor_peak_current_margin"] == pytest.approx((4 - 4.5) / 4, rel=1e-9)
    assert "segment kick: needs 4.5 A, the motor's peak limit is 4 A" in pk["reasons"]
    assert np.isnan(row(sel, "loss-bd")["motor_peak_current_margin"])
    assert "motor_peak_current" not in row(sel, "loss-bd")["failed"]


CYCLE = """
name = "spin"
[supply]
nominal_voltage = "48 V"
[environment]
ambient_temperature = "25 degC"
[gearing]
direct = true
catalogue = false
[cycle]
[[cycle.segments]]
name = "up"
duration = "200 s"
torque = "0.02 N*m"
speed_start = "0 rad/s"
speed_end = "1000 rad/s"
[[cycle.segments]]
name = "spin"
duration = "300 s"
torque = "0.01 N*m"
speed_start = "1000 rad/s"
[[cycle.segments]]
name = "down"
duration = "100 s"
torque = "0 N*m"
speed_start = "1000 rad/s"
speed_end = "0 rad/s"
[[cycle.segments]]
name = "rest"
duration = "400 s"
torque = "0 N*m"
speed_start = "0 rad/s"
"""


@pytest.mark.parametrize("part, at_winding", [("loss-br", True), ("loss-bl", False)])
def test_no_load_loss_of_speed_ramps_by_simulation(loss_catalog, envelope_file, part, at_winding):
    # Source: solve_ivp of the two-node network (Cw = 20/3 J/K, Ch = 600/7 J/K) with the copper loss
    # I²·R(Tw), I = T_em/Kt(Tw), T_em = T + T_f (rotor inertia 1e-6 kg·m²: its torque is negligible but
    # counted), and the no-load loss T_f·ω(t) with ω ramping, at the winding (brushed) or the housing
    # (brushless) node, repeated until periodic.
    from scipy.integrate import solve_ivp

    sel = loss_catalog.select(envelope_file(CYCLE))
    segments = [(200.0, 0.02, 0.0, 1000.0), (300.0, 0.01, 1000.0, 1000.0), (100.0, 0.0, 1000.0, 0.0),
                (400.0, 0.0, 0.0, 0.0)]
    cw, ch, tf, inertia = 20.0 / 3.0, 600.0 / 7.0, 0.01, 1e-6

    def rhs(t, y, torque, w0, w1, d):
        speed = w0 + (w1 - w0) * t / d
        t_em = torque + inertia * (w1 - w0) / d + (tf if speed > 0 or w1 > 0 else 0.0)
        current = t_em / (0.1 * (1 + BETA * y[0]))
        copper = current ** 2 * (1 + ALPHA * y[0])
        no_load = tf * abs(speed)
        pw, ph = (copper + no_load, 0.0) if at_winding else (copper, no_load)
        return [(pw - (y[0] - y[1]) / 3.0) / cw, ((y[0] - y[1]) / 3.0 - y[1] / 7.0 + ph) / ch]

    y = np.zeros(2)
    for _ in range(400):
        start, top = y.copy(), 0.0
        for d, torque, w0, w1 in segments:
            sol = solve_ivp(rhs, (0, d), y, args=(torque, w0, w1, d), rtol=1e-10, atol=1e-10, max_step=d / 100)
            top = max(top, sol.y[0].max())
            y = sol.y[:, -1]
        if np.max(np.abs(y - start)) < 1e-8:
            break
    assert row(sel, part)["winding_temperature"] - TA == pytest.approx(top, abs=0.1)
