"""Independent check of each demo envelope's top candidate by simulation.

Along the speed profile the required motor torque follows from the rigid
mechanics (J·dω/dt = T, gear power balance T_out/(n·η) driving, T_out·η/n
back-driven, Coulomb friction opposing motion); the current I = T/Kt(Tw) and
the terminal voltage V = R(Tw)·I + Ke(Tw)·ω follow from the armature equation
with L·dI/dt neglected (piecewise-constant current); the winding and housing
temperatures are integrated with scipy.integrate.solve_ivp on the two-node
network (Cw·dTw/dt = I²R(Tw) [+ P0] − (Tw − Th)/Rth1, Ch·dTh/dt = (Tw − Th)/Rth1 [+ P0] −
(Th − Ta)/(f·Rth2), Cw = τw/Rth1, Ch = τm/Rth2 of the datasheet, f the cooling factor, P0 = T_f·|ω|
the friction and iron loss at the node where it arises), repeated cycle after cycle from
ambient until the cycle-start temperature settles.

Sources: textbook chapter on DC machines (armature and torque equations);
textbook chapter on heating and cooling of machines (two-node network);
IEC 60028 (copper resistance law); textbook on drive engineering (gears).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import solve_ivp

QUERIES = Path(__file__).resolve().parents[2] / "queries"
ALPHA20 = 0.00393


def resistance(c, tw):
    alpha = ALPHA20 / (1 + ALPHA20 * (c["resistance_reference_temperature"] - 293.15))
    return c["terminal_resistance"] * (1 + alpha * (tw - c["resistance_reference_temperature"]))


def kt_at(c, tw, k):
    return c[k] * (1 + c["magnet_coefficient"] * (tw - c["resistance_reference_temperature"]))


def motor_torque(env, c, t_load, w_load, a_load):
    out = t_load + env.load_inertia * a_load
    n, eta = c["ratio"], c["efficiency"]
    through = out / (n * eta) if out * w_load >= 0 or not env.back_drive else out * eta / n
    return (c["rotor_inertia"] + c["gear_inertia"]) * n * a_load + through + c["friction_torque"] * np.sign(w_load)


def simulate(env, c):
    """(peak winding temperature [K], worst |V| [V], coolest winding temperature [K]) in the periodic state."""
    ta = env.ambient_temperature
    # heat capacities of the datasheet: the envelope's cooling factor f scales the housing-to-ambient
    # resistance of the candidate, not the housing's heat capacity
    rth2_datasheet = c["thermal_resistance_housing_ambient"] / env.housing_cooling_factor
    cw, ch = c["thermal_time_constant_winding"] / c["thermal_resistance_winding_housing"], c["thermal_time_constant_motor"] / rth2_datasheet
    segs = []
    for k in range(len(env.names)):
        w0, w1, d = env.speed_start[k], env.speed_end[k], env.duration[k]
        a = (w1 - w0) / d if env.mode == "cycle" else 0.0
        segs.append((d, motor_torque(env, c, env.torque[k], (w0 + w1) / 2, a), w0, w1, env.continuous[k]))

    # friction and iron losses T_f·|ω_motor| heat the rotor's winding node of a brushed motor, the stator
    # (housing) of a brushless one (textbook chapters on DC and brushless PM machines: where the core and
    # friction losses arise); ω ramps linearly within a segment
    at_winding = str(c["commutation"]).lower() != "brushless"

    def rhs(t, y, t_em, w0=0.0, w1=0.0, d=1.0):
        tw, th = y
        i = t_em / kt_at(c, tw, "torque_constant")
        no_load = c["friction_torque"] * c["ratio"] * abs(w0 + (w1 - w0) * t / d)
        copper = i * i * resistance(c, tw) + (no_load if at_winding else 0.0)
        return [(copper - (tw - th) / c["thermal_resistance_winding_housing"]) / cw,
                ((tw - th) / c["thermal_resistance_winding_housing"] - (th - ta) / c["thermal_resistance_housing_ambient"]
                 + (0.0 if at_winding else no_load)) / ch]

    y = np.array([ta, ta])
    if env.mode == "points":   # continuous points held until steady, the hottest counts
        peak = ta
        for d, t_em, w0, w1, cont in segs:
            if cont:
                sol = solve_ivp(rhs, (0, 20 * c["thermal_time_constant_motor"]), [ta, ta], args=(t_em, w0, w1),
                                rtol=1e-9, atol=1e-9)
                peak = max(peak, sol.y[0, -1])
        tw_peak = tw_low = peak
    else:
        for _cycle in range(2000):
            start = y.copy()
            tw_peak, tw_low = -np.inf, np.inf
            for d, t_em, w0, w1, _ in segs:
                sol = solve_ivp(rhs, (0, d), y, args=(t_em, w0, w1, d), rtol=1e-9, atol=1e-9, max_step=d / 4)
                tw_peak = max(tw_peak, sol.y[0].max())
                tw_low = min(tw_low, sol.y[0].min())
                y = sol.y[:, -1]
            if abs(y[0] - start[0]) < 1e-4:
                break
    v_worst = 0.0
    for tw in (ta, tw_peak):
        for d, t_em, w0, w1, _ in segs:
            i = t_em / kt_at(c, tw, "torque_constant")
            for w in np.linspace(w0, w1, 21):   # along the ramp
                v = resistance(c, tw) * i + kt_at(c, tw, "back_emf_constant") * c["ratio"] * w
                v_worst = max(v_worst, abs(v))
    return tw_peak, v_worst, tw_low


@pytest.mark.parametrize("name", ["drive_wheel", "lift_axis", "camera_pan", "water_pump", "screw_stage"])
def test_top_candidate_by_simulation(demo_catalog, name):
    sel = demo_catalog.select(QUERIES / f"{name}.toml")
    assert len(sel.shortlist) >= 3
    assert len(sel.reason_counts()) >= 3
    top = sel.shortlist.iloc[0]
    i = list(sel.candidates["id"]).index(top["candidate"])
    env = sel.envelope
    # the envelope's tolerance: current and heat at Kt low and R high; the voltage at the worst of the four
    # ends of the band, each motor with its own winding temperature (signed tolerances: one motor)
    def corner(k_side, r_side):
        k = 1 + env.tolerance["torque_constant"][k_side]
        r = 1 + env.tolerance["terminal_resistance"][r_side]
        out = {key: v[i] for key, v in sel.candidates.items()}
        out.update(torque_constant=out["torque_constant"] * k, back_emf_constant=out["back_emf_constant"] * k,
                   terminal_resistance=out["terminal_resistance"] * r)
        return out

    c = corner(0, 1)
    tw_peak, _, tw_low = simulate(env, c)
    v_worst = max(simulate(env, corner(k, r))[1] for k in (0, 1) for r in (0, 1))
    assert v_worst <= env.available_voltage * (1 - env.margins["voltage"]) + 1e-9   # speeds reachable
    assert tw_peak <= c["max_winding_temperature"] - env.margins["temperature"]                        # winding under limit
    # R and Kt follow the winding temperature at every instant in both: the same peak within 0.1 K
    assert top["winding_temperature"] == pytest.approx(tw_peak, abs=0.1)
    needed = env.available_voltage * (1 - top["voltage_margin"])
    # the same voltage at the same hot temperature (the two peaks agree to 0.1 K: 1e-4 of the drop)
    assert 0.98 * needed <= v_worst <= needed * (1 + 1e-4)


def test_impossible_has_no_candidate(demo_catalog):
    sel = demo_catalog.select(QUERIES / "impossible.toml")
    assert sel.shortlist.empty and len(sel.rejected) > 100
