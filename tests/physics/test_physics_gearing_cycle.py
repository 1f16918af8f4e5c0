"""Gearhead and duty-cycle relations on hand-checkable examples.

Sources: power balance of a gear train with efficiency and inertia referred
through a ratio (textbook on machine elements / drive engineering); mean, RMS
and integral over an interval (IEC 60050-103).  All examples are exact, so
tolerances are 1e-12 or tighter.
"""

import math

import numpy as np
import pytest

from catalog import physics as ph

N, ETA = 10.0, 0.8


def test_speed_through_the_gear():
    assert ph.motor_side_speed(30.0, N) == 300.0
    assert ph.load_side_speed(300.0, N) == 30.0


def test_torque_picks_the_power_flow_direction():
    # driving: T_motor = T_load/(n·η) = 8/(10·0.8) = 1
    assert ph.motor_side_torque(8.0, 5.0, N, ETA) == pytest.approx(1.0, rel=1e-15)
    assert ph.driving_motor_torque(8.0, N, ETA) == pytest.approx(1.0, rel=1e-15)
    # back-driven (lowering a weight: torque up, speed down): T_load·η/n = 0.64
    assert ph.motor_side_torque(8.0, -5.0, N, ETA) == pytest.approx(0.64, rel=1e-15)
    assert ph.back_driven_motor_torque(8.0, N, ETA) == pytest.approx(0.64, rel=1e-15)
    # braking a moving load: torque opposes speed
    assert ph.motor_side_torque(-8.0, 5.0, N, ETA) == pytest.approx(-0.64, rel=1e-15)
    # a separate back-driving efficiency (e.g. a worm stage)
    assert ph.motor_side_torque(8.0, -5.0, N, ETA, 0.5) == pytest.approx(0.4, rel=1e-15)
    # holding (ω = 0) is treated as driving: the conservative, larger torque
    assert ph.motor_side_torque(8.0, 0.0, N, ETA) == pytest.approx(1.0, rel=1e-15)
    torques = ph.motor_side_torque(np.array([8.0, 8.0]), np.array([5.0, -5.0]), N, ETA)
    np.testing.assert_allclose(torques, [1.0, 0.64], rtol=1e-15)


def test_inertia_and_acceleration_torque():
    jm, jg, jl = 2e-5, 1e-5, 3e-3
    assert ph.reflected_inertia(jm, jg, jl, N) == pytest.approx(jm + jg + jl / 100.0,
                                                                rel=1e-15)
    alpha_load = 20.0                                     # rad/s² at the load
    driving = ph.acceleration_torque(alpha_load, N, ETA, jm, jg, jl)
    expected = (jm + jg) * N * alpha_load + jl * alpha_load / (N * ETA)
    assert driving == pytest.approx(expected, rel=1e-15)
    # with η = 1 it is the reflected inertia times the motor acceleration
    ideal = ph.acceleration_torque(alpha_load, N, 1.0, jm, jg, jl)
    assert ideal == pytest.approx(ph.reflected_inertia(jm, jg, jl, N) * N * alpha_load,
                                  rel=1e-14)
    # decelerating a forward-moving load back-drives the gear when speed is given
    braking = ph.acceleration_torque(-alpha_load, N, ETA, jm, jg, jl, load_speed=3.0)
    assert braking == pytest.approx(-(jm + jg) * N * alpha_load
                                    - jl * alpha_load * ETA / N, rel=1e-14)


def test_required_motor_torque_combines_load_and_inertia():
    jm, jg, jl = 2e-5, 1e-5, 3e-3
    # lifting while accelerating: all through the gear forward
    got = ph.required_motor_torque(4.0, 2.0, 10.0, N, ETA, jm, jg, jl)
    assert got == pytest.approx((jm + jg) * N * 10.0 + (4.0 + jl * 10.0) / (N * ETA),
                                rel=1e-14)
    # lowering at constant speed: the weight back-drives the motor
    got = ph.required_motor_torque(4.0, -2.0, 0.0, N, ETA, jm, jg, jl)
    assert got == pytest.approx(4.0 * ETA / N, rel=1e-15)


def test_optimal_ratio_includes_efficiency():
    n = ph.optimal_ratio_inertial(2e-5, 8e-3, 0.0, 0.8)
    assert n == pytest.approx(math.sqrt(8e-3 / (0.8 * 2e-5)), rel=1e-15)


def test_ramps_in_rms_mean_and_energy():
    # a ramp from 0 to 3 over 1 s: mean 1.5, mean square 3, ∫ = 1.5
    assert ph.rms([0.0], [1.0], [3.0]) == pytest.approx(math.sqrt(3.0), rel=1e-15)
    assert ph.time_average([0.0], [1.0], [3.0]) == pytest.approx(1.5, rel=1e-15)
    assert ph.energy_per_cycle([0.0], [1.0], [3.0]) == pytest.approx(1.5, rel=1e-15)
    # a ramp from −1 to 3: positive part is the triangle 3²/(2·4)·d = 1.125·d
    assert ph.energy_per_cycle([-1.0], [2.0], [3.0], regenerative=False) == \
        pytest.approx(2.25, rel=1e-15)
    assert ph.energy_per_cycle([-1.0], [2.0], [3.0]) == pytest.approx(2.0, rel=1e-15)


def test_energy_regenerative_or_dissipated():
    power, durations = [100.0, -40.0, 0.0], [1.0, 0.5, 2.0]
    assert ph.energy_per_cycle(power, durations) == pytest.approx(80.0, rel=1e-15)
    assert ph.energy_per_cycle(power, durations, regenerative=False) == \
        pytest.approx(100.0, rel=1e-15)


def test_cycle_edge_cases():
    assert math.isnan(ph.rms([1.0, 2.0], [0.0, 0.0]))
    with pytest.raises(ValueError):
        ph.rms([1.0], [-1.0])
    assert ph.rms([-2.0, -2.0], [1.0, 3.0]) == pytest.approx(2.0, rel=1e-15)
