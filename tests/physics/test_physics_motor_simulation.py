"""Linear motor relations against an independent numerical simulation.

Source of the reference: direct numerical integration (scipy.integrate.solve_ivp)
of the DC machine equations from a textbook chapter on DC machines:
    L·di/dt = V − R·i − Ke·ω,   J·dω/dt = Kt·i − Tf − T_load,  Tf = Kt·I0.
"""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from catalog import physics as ph

V, R, KT, KE, I0, J = 24.0, 2.0, 0.05, 0.05, 0.05, 1.0e-5
TF = KT * I0
TAU_M = J * R / (KT * KE)          # independent: 8 ms


def simulate(load_torque, inductance, t_end, state0, locked=False, method="Radau"):
    def rhs(t, y):
        i, w = y
        di = (V - R * i - KE * w) / inductance
        net = KT * i - TF - load_torque
        if locked or (w <= 0.0 and net < 0.0):
            dw = 0.0                      # rotor held / static friction at rest
        else:
            dw = net / J
        return [di, dw]

    return solve_ivp(rhs, (0.0, t_end), state0, method=method, rtol=1e-11,
                     atol=1e-12, dense_output=True)


@pytest.mark.parametrize("fraction", [0.0, 0.1, 0.5, 0.9])
def test_steady_speed_and_current_match_simulation(fraction):
    # Source: solve_ivp of the DC machine equations (module docstring).
    load = fraction * KT * V / R       # fraction of the ideal stall torque
    sol = simulate(load, 1e-3, 80 * TAU_M, [0.0, V / KE])
    i_end, w_end = sol.y[:, -1]
    assert ph.speed_at_torque(load, V, R, KT, KE, I0) == pytest.approx(w_end, rel=1e-8)
    assert ph.current_at_torque(load, KT, I0) == pytest.approx(i_end, rel=1e-8)


def test_stall_current_and_torque_with_rotor_locked():
    # Source: solve_ivp with ω clamped at 0 (locked-rotor test).
    sol = simulate(0.0, 1e-3, 50 * 1e-3 / R, [0.0, 0.0], locked=True)
    i_end = sol.y[0, -1]
    assert ph.stall_current(V, R) == pytest.approx(i_end, rel=1e-9)
    assert ph.stall_torque(KT, ph.stall_current(V, R), I0) == pytest.approx(
        KT * i_end - TF, rel=1e-9)


def test_speed_rise_time_is_the_mechanical_time_constant():
    # Source: solve_ivp; textbook first-order response ω0·(1 − e^(−t/τm)) for
    # τe ≪ τm.  With τe = τm/1000 the second-order correction is O((τe/τm)²);
    # LSODA copes with the static-friction switch at start-up.
    tau_m = ph.mechanical_time_constant(J, R, KT, KE)
    assert tau_m == pytest.approx(TAU_M, rel=1e-12)
    inductance = R * tau_m / 1000.0
    sol = simulate(0.0, inductance, 40 * tau_m, [0.0, 0.0], method="LSODA")
    w_final = sol.y[1, -1]
    assert ph.no_load_speed(V, R, I0, KE) == pytest.approx(w_final, rel=1e-8)
    target = (1.0 - math.exp(-1.0)) * w_final
    t63 = brentq(lambda t: sol.sol(t)[1] - target, 1e-9, 10 * tau_m, xtol=1e-14)
    assert t63 == pytest.approx(tau_m, rel=1e-4)


def test_speed_torque_line_is_straight_between_no_load_and_stall():
    # Source: solve_ivp steady states at two loads give the slope R/(Kt·Ke).
    speeds = []
    for load in (0.01, 0.02):
        sol = simulate(load, 1e-3, 80 * TAU_M, [0.0, V / KE])
        speeds.append(sol.y[1, -1])
    slope = (speeds[0] - speeds[1]) / 0.01
    assert ph.speed_torque_gradient(R, KT, KE) == pytest.approx(slope, rel=1e-6)
    stall = ph.stall_torque(KT, ph.stall_current(V, R), I0)
    assert ph.speed_at_torque(stall, V, R, KT, KE, I0) == pytest.approx(0.0, abs=1e-9)
