"""Property tests: inverse relations reproduce the forward ones (hypothesis).

Source of the expectations: exact algebra of the linear DC motor model
(textbook chapter on DC machines), the IEC 60028 copper line and the
two-node thermal steady state: each inverse must return the forward input to
1e-9 relative for any physically valid motor.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from catalog import physics as ph

REL = 1e-9


def log_uniform(low, high):
    return st.floats(math.log10(low), math.log10(high)).map(lambda x: 10.0 ** x)


@st.composite
def motors(draw):
    """A physically valid motor: I0 < Is, V > R·I0, all constants positive."""
    resistance = draw(log_uniform(0.02, 100.0))
    voltage = draw(log_uniform(1.0, 400.0))
    kt = draw(log_uniform(1e-3, 3.0))
    stall = voltage / resistance
    i0 = stall * draw(log_uniform(1e-3, 0.3))
    return dict(supply_voltage=voltage, terminal_resistance=resistance,
                torque_constant=kt, back_emf_constant=kt, no_load_current=i0,
                rotor_inertia=draw(log_uniform(1e-8, 1.0)),
                terminal_inductance=draw(log_uniform(1e-6, 0.1)))


def all_quantities(m):
    """Every catalogue quantity from the forward relations only."""
    q = dict(m)
    q["speed_constant"] = ph.speed_constant_from_back_emf_constant(m["back_emf_constant"])
    q["stall_current"] = ph.stall_current(m["supply_voltage"], m["terminal_resistance"])
    q["stall_torque"] = ph.stall_torque(m["torque_constant"], q["stall_current"],
                                        m["no_load_current"])
    q["friction_torque"] = ph.friction_torque(m["torque_constant"], m["no_load_current"])
    q["no_load_speed"] = ph.no_load_speed(m["supply_voltage"], m["terminal_resistance"],
                                          m["no_load_current"], m["back_emf_constant"])
    q["speed_torque_gradient"] = ph.speed_torque_gradient(
        m["terminal_resistance"], m["torque_constant"], m["back_emf_constant"])
    q["mechanical_time_constant"] = ph.mechanical_time_constant(
        m["rotor_inertia"], m["terminal_resistance"], m["torque_constant"],
        m["back_emf_constant"])
    q["electrical_time_constant"] = ph.electrical_time_constant(
        m["terminal_inductance"], m["terminal_resistance"])
    q["motor_constant"] = ph.motor_constant(m["torque_constant"], m["terminal_resistance"])
    q["max_efficiency"] = ph.max_efficiency(m["no_load_current"], q["stall_current"])
    q["max_efficiency_current"] = ph.max_efficiency_current(m["no_load_current"],
                                                            q["stall_current"])
    q["max_output_power"] = ph.max_output_power(m["supply_voltage"],
                                                m["terminal_resistance"],
                                                m["no_load_current"])
    return q


@settings(max_examples=200, deadline=None)
@given(motors(), st.floats(0.0, 1.0))
def test_operating_point_inverses(motor, fraction):
    q = all_quantities(motor)
    args = (motor["supply_voltage"], motor["terminal_resistance"],
            motor["torque_constant"], motor["back_emf_constant"], motor["no_load_current"])
    torque = fraction * q["stall_torque"]
    speed = ph.speed_at_torque(torque, *args)
    assert ph.torque_at_speed(speed, *args) == pytest.approx(
        torque, rel=REL, abs=REL * q["stall_torque"])
    current = ph.current_at_torque(torque, motor["torque_constant"], motor["no_load_current"])
    assert ph.torque_at_current(current, motor["torque_constant"],
                                motor["no_load_current"]) == pytest.approx(
        torque, rel=REL, abs=REL * q["stall_torque"])
    voltage = ph.voltage_at_torque_and_speed(torque, speed, motor["terminal_resistance"],
                                             motor["torque_constant"],
                                             motor["back_emf_constant"],
                                             motor["no_load_current"])
    assert voltage == pytest.approx(motor["supply_voltage"], rel=REL)
    if speed > 1e-3 * q["no_load_speed"]:     # (V − R·I)/ω cancels near stall
        assert ph.back_emf_constant_from_operating_point(
            voltage, current, speed, motor["terminal_resistance"]) == pytest.approx(
            motor["back_emf_constant"], rel=REL)
    # power on the line never exceeds the documented maximum, reached at Ts/2
    power = torque * speed
    assert power <= q["max_output_power"] * (1 + 1e-12)
    half = q["stall_torque"] / 2.0
    assert half * ph.speed_at_torque(half, *args) == pytest.approx(q["max_output_power"],
                                                                   rel=REL)
    assert ph.max_output_power_from_no_load_speed_and_stall_torque(
        q["no_load_speed"], q["stall_torque"]) == pytest.approx(q["max_output_power"], rel=REL)
    # efficiency is maximal at the documented current
    eta = ph.efficiency_at_current(current, motor["no_load_current"], q["stall_current"])
    assert eta <= q["max_efficiency"] * (1 + 1e-12)
    assert ph.efficiency_at_current(q["max_efficiency_current"], motor["no_load_current"],
                                    q["stall_current"]) == pytest.approx(
        q["max_efficiency"], rel=REL)


temperatures = st.floats(233.15, 473.15)


@settings(max_examples=200, deadline=None)
@given(log_uniform(1e-3, 1e3), temperatures, st.sampled_from([293.15, 298.15]))
def test_copper_law_inverses(resistance, temperature, reference):
    hot = ph.resistance_at_temperature(resistance, temperature, reference)
    assert ph.resistance_at_reference_temperature(hot, temperature, reference) == \
        pytest.approx(resistance, rel=REL)
    assert ph.winding_temperature_from_resistance(hot, resistance, reference) == \
        pytest.approx(temperature, rel=REL)
    # the same winding stated at 20 °C gives the same hot resistance
    r20 = ph.resistance_at_temperature(resistance, 293.15, reference)
    assert ph.resistance_at_temperature(r20, temperature, 293.15) == pytest.approx(hot,
                                                                                  rel=REL)


@settings(max_examples=200, deadline=None)
@given(log_uniform(0.05, 50.0), log_uniform(0.1, 10.0), log_uniform(0.1, 20.0),
       st.floats(253.15, 333.15), st.floats(0.01, 0.99))
def test_thermal_steady_state_inverses(resistance, rth1, rth2, ambient, fraction):
    current = fraction * ph.thermal_runaway_current(resistance, rth1, rth2)
    steady = ph.steady_winding_temperature(current, resistance, rth1, rth2, ambient)
    assert np.isfinite(steady)
    assert ph.max_continuous_current(steady, resistance, rth1, rth2, ambient) == \
        pytest.approx(current, rel=REL)
    assert ph.thermal_resistance_from_max_continuous_current(
        current, steady, resistance, ambient) == pytest.approx(rth1 + rth2, rel=1e-8)
    loss = ph.copper_loss(current, resistance, steady)
    assert steady - ambient == pytest.approx(loss * (rth1 + rth2), rel=REL)
    housing = ph.steady_housing_temperature(current, resistance, rth1, rth2, ambient)
    assert housing - ambient == pytest.approx(loss * rth2, rel=REL)


@settings(max_examples=200, deadline=None)
def signed(limit):
    """Floats in ±limit whose products cannot underflow (0 allowed)."""
    return st.floats(-limit, limit).filter(lambda x: x == 0.0 or abs(x) > 1e-100)


@given(signed(10.0), signed(100.0), log_uniform(1.0, 500.0),
       st.floats(0.3, 1.0), st.floats(0.2, 1.0))
def test_gear_power_flow_inverses(torque, speed, ratio, efficiency, back):
    motor_torque = ph.motor_side_torque(torque, speed, ratio, efficiency, back)
    motor_speed = ph.motor_side_speed(speed, ratio)
    assert ph.load_side_speed(motor_speed, ratio) == pytest.approx(speed, rel=REL)
    assert ph.load_side_torque(motor_torque, motor_speed, ratio, efficiency, back) == \
        pytest.approx(torque, rel=REL, abs=1e-300)
    # the gear never creates power
    load_power, motor_power = torque * speed, motor_torque * motor_speed
    if load_power >= 0.0:
        assert motor_power >= load_power * (1 - 1e-12)
    else:
        assert motor_power >= load_power * (1 + 1e-12)   # less power reaches the motor


@settings(max_examples=100, deadline=None)
@given(log_uniform(1e-7, 1e-2), log_uniform(1e-6, 10.0), st.floats(0.5, 1.0))
def test_optimal_ratio_minimises_acceleration_torque(motor_inertia, load_inertia, eta):
    n = ph.optimal_ratio_inertial(motor_inertia, load_inertia, 0.0, eta)
    best = ph.acceleration_torque(1.0, n, eta, motor_inertia, 0.0, load_inertia)
    for factor in (0.99, 1.01):
        assert ph.acceleration_torque(1.0, n * factor, eta, motor_inertia, 0.0,
                                      load_inertia) > best


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.floats(-5.0, 5.0), st.floats(-5.0, 5.0),
                          st.floats(0.01, 3.0)), min_size=1, max_size=8))
def test_cycle_helpers(segments):
    start, end, durations = (np.array(x) for x in zip(*segments))
    value_rms = ph.rms(start, durations, end)
    mean = ph.time_average(start, durations, end)
    assert value_rms >= abs(mean) * (1 - 1e-12) - 1e-100   # v² may underflow
    # ramps: exact against fine sampling of each linear segment (midpoint rule
    # for ∫v² is exact to O(h²); 2000 points → 1e-6)
    t = (np.arange(2000) + 0.5) / 2000
    v = start[:, None] + (end - start)[:, None] * t
    sampled = math.sqrt(np.sum(np.mean(v * v, axis=1) * durations) / durations.sum())
    assert value_rms == pytest.approx(sampled, rel=1e-6, abs=1e-9)
    positive = ph.energy_per_cycle(start, durations, end, regenerative=False)
    sampled_positive = np.sum(np.mean(np.maximum(v, 0.0), axis=1) * durations)
    assert positive == pytest.approx(sampled_positive, rel=1e-5, abs=1e-5)
    assert ph.energy_per_cycle(start, durations, end) == pytest.approx(
        mean * durations.sum(), rel=1e-9, abs=1e-12)
