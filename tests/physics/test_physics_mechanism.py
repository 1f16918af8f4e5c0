"""catalog.physics.mechanism against definitions, textbook relations and an integration.

Sources: standard gravity g_n = 9.80665 m/s² exactly (3rd CGPM 1901; NIST SP 811;
scipy.constants.g); efficiency as output power over input power (IEC 60050-151,
"efficiency"); Budynas & Nisbett, Shigley's Mechanical Engineering Design, ch. 8
(lead: travel per revolution); Meriam & Kraige, Engineering Mechanics: Dynamics,
ch. 2 (constant acceleration), ch. 3 (Coulomb friction on an incline), ch. 6
(kinetic energy of connected bodies); Gillespie, Fundamentals of Vehicle
Dynamics, ch. 4 (rolling resistance).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants
from scipy.integrate import solve_ivp

from catalog import physics as ph


def test_standard_gravity_is_the_defined_value():
    assert ph.STANDARD_GRAVITY == constants.g == 9.80665     # CGPM 1901, NIST SP 811


def test_one_revolution_moves_one_lead():
    # Shigley ch. 8: the lead is the travel per revolution; v = ω·r with r = l/(2π)
    for lead in (0.001, 0.005, 0.0254 / 5):
        assert 2 * math.pi * ph.screw_effective_radius(lead) == pytest.approx(lead, rel=1e-15)


@pytest.mark.parametrize("force, speed", [(80.0, 0.3), (-80.0, -0.3), (-80.0, 0.3), (80.0, -0.3)])
def test_power_balance_in_the_direction_of_the_power(force, speed):
    # IEC 60050-151 efficiency = power out / power in: driving F·v = η·T·ω; back-driven T·ω = η_b·F·v
    r, eta, back = 0.004, 0.85, 0.7
    torque = ph.mechanism_input_torque(force, r, eta, back, speed, 0.0, 0.0)
    omega = speed / r
    if force * speed > 0:
        assert force * speed == pytest.approx(eta * torque * omega, rel=1e-14)
    else:
        assert torque * omega == pytest.approx(back * force * speed, rel=1e-14)
        assert abs(torque * omega) < abs(force * speed)       # the loss is taken from the load's power


def test_a_standing_load_is_held_with_the_driving_efficiency():
    held = ph.mechanism_input_torque(100.0, 0.01, 0.8, 0.6, 0.0, 5e-4, 0.0)
    assert held == pytest.approx(100.0 * 0.01 / 0.8, rel=1e-15)        # the larger of F·r/η, F·r·η_b


def test_own_inertia_bypasses_the_losses():
    # J·α at the input is added as it is (the screw turns on the motor side of the nut's friction)
    base = ph.mechanism_input_torque(50.0, 0.01, 0.9, 0.8, 1.0, 0.0, 0.0)
    assert ph.mechanism_input_torque(50.0, 0.01, 0.9, 0.8, 1.0, 2e-4, 300.0) - base == pytest.approx(0.06)


def test_gravity_keeps_its_sign_friction_follows_the_motion():
    # Meriam & Kraige ch. 3: N = m·g·cos θ, friction μ·N against the motion, none at rest
    m, th, mu = 7.0, math.radians(20), 0.15
    up = ph.linear_load_force(m, 0.0, 1.0, th, mu, 0.0)
    down = ph.linear_load_force(m, 0.0, -1.0, th, mu, 0.0)
    rest = ph.linear_load_force(m, 0.0, 0.0, th, mu, 0.0)
    assert rest == pytest.approx(m * constants.g * math.sin(th), rel=1e-15)
    assert up - down == pytest.approx(2 * mu * m * constants.g * math.cos(th), rel=1e-14)
    assert (up + down) / 2 == pytest.approx(rest, rel=1e-14)
    assert ph.linear_load_force(m, 2.0, 1.0, 0.0, 0.0, 5.0) == pytest.approx(m * 2.0 + 5.0)


def test_wheels_share_the_road_load():
    # Gillespie ch. 4: rolling resistance c_rr·m·g·cos θ against the motion, grade m·g·sin θ
    m, th, crr = 40.0, math.radians(8), 0.015
    per_wheel = ph.wheel_load_force(m, 0.5, 1.0, th, crr, 12.0, 2)
    whole = m * constants.g * math.sin(th) + crr * m * constants.g * math.cos(th) + m * 0.5 + 12.0
    assert per_wheel == pytest.approx(whole / 2, rel=1e-14)


def test_reflected_inertia_stores_the_same_kinetic_energy():
    # Meriam & Kraige ch. 6: ½·m·v² + ½·J·ω² = ½·J_total·ω² with v = ω·r
    m, r, j, omega = 12.0, 0.0035, 3e-5, 410.0
    total = ph.reflected_mechanism_inertia(m, r, j)
    assert 0.5 * total * omega**2 == pytest.approx(0.5 * m * (omega * r) ** 2 + 0.5 * j * omega**2, rel=1e-14)


def test_rotary_load_torque():
    # Euler: T = J·α + friction against the motion + the external torque (against positive rotation)
    assert ph.rotary_load_torque(0.2, 10.0, -1.0, 0.3, 0.5) == pytest.approx(2.0 - 0.3 + 0.5)
    assert ph.rotary_load_torque(0.2, 0.0, 0.0, 0.3, 0.5) == pytest.approx(0.5)


@pytest.mark.parametrize("fraction", [0.05, 0.25, 1 / 3, 0.5])
def test_trapezoid_integrates_to_the_distance(fraction):
    # integrate a(t) = ±a over the ramps (solve_ivp) and compare with D and v = 0 at the end
    distance, time = -0.42, 1.3
    top = ph.move_peak_speed(distance, time, fraction)
    accel = ph.move_acceleration(distance, time, fraction)
    ramp = fraction * time
    assert accel * ramp == pytest.approx(top, rel=1e-14)

    state = [0.0, 0.0]
    for t0, t1, a in ((0.0, ramp, accel), (ramp, time - ramp, 0.0), (time - ramp, time, -accel)):
        if t1 > t0:
            sol = solve_ivp(lambda t, y, a=a: [y[1], a], (t0, t1), state, rtol=1e-12, atol=1e-14)
            state = sol.y[:, -1]
    assert state[0] == pytest.approx(distance, rel=1e-10)
    assert state[1] == pytest.approx(0.0, abs=1e-12)


def test_the_triangle_needs_the_least_acceleration():
    # for a given D and T the acceleration D/(f·(1 − f)·T²) is smallest at f = 1/2: 4·D/T²
    f = np.linspace(0.05, 0.5, 46)
    a = ph.move_acceleration(1.0, 2.0, f)
    assert np.argmin(a) == len(f) - 1 and a[-1] == pytest.approx(1.0)
