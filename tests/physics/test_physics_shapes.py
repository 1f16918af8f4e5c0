"""Every public physics function works with a scalar, an ndarray and a Series.

Source of the expectations: numpy broadcasting rules (elementwise results
must equal the scalar results) and the package contract in
catalog/physics/__init__.py (scalar in -> float out, Series in -> Series out
with the same index).
"""

import inspect

import numpy as np
import pandas as pd
import pytest

from catalog import physics as ph

# One consistent value per canonical parameter name (a physically valid motor).
VALUES = {
    "supply_voltage": 24.0, "terminal_resistance": 2.0, "terminal_inductance": 1e-3,
    "torque_constant": 0.05, "back_emf_constant": 0.05, "speed_constant": 20.0,
    "no_load_current": 0.1, "stall_current": 12.0, "stall_torque": 0.595,
    "friction_torque": 0.005, "no_load_speed": 476.0, "speed_torque_gradient": 800.0,
    "rotor_inertia": 1e-5, "mechanical_time_constant": 8e-3,
    "electrical_time_constant": 5e-4, "motor_constant": 0.035, "max_efficiency": 0.83,
    "max_efficiency_current": 1.095, "max_output_power": 56.6,
    "torque": 0.1, "speed": 300.0, "current": 3.0,
    "temperature_coefficient": 0.00393, "coefficient_reference_temperature": 293.15,
    "reference_temperature": 298.15, "resistance_reference_temperature": 298.15,
    "temperature": 373.15, "resistance": 2.5,
    "magnet_temperature": 353.15, "remanence_coefficient": -0.001,
    "winding_temperature": 363.15, "ambient_temperature": 313.15,
    "max_winding_temperature": 428.15, "max_continuous_current": 2.0,
    "thermal_resistance_winding_housing": 2.0, "thermal_resistance_housing_ambient": 6.0,
    "thermal_time_constant_winding": 10.0, "thermal_time_constant_motor": 300.0,
    "load_speed": 20.0, "motor_speed": 300.0, "load_torque": 1.5, "motor_torque": 0.1,
    "ratio": 15.0, "efficiency": 0.8, "back_driving_efficiency": 0.7,
    "gear_inertia": 2e-6, "load_inertia": 4e-3,
    "load_acceleration": 50.0,
    # mechanisms (a 5 kg carriage on a 10 mm-lead screw, 5° up, a 20 mm pulley, a 4-wheel cart)
    "mass": 5.0, "acceleration": 1.5, "slope_angle": 0.087, "friction_coefficient": 0.05,
    "external_force": 10.0, "force": 60.0, "radius": 0.02, "lead": 0.01,
    "mechanism_inertia": 2e-5, "angular_acceleration": 75.0, "rolling_resistance": 0.02, "wheels": 4.0,
    "inertia": 0.05, "external_torque": 0.3, "distance": 0.2, "move_time": 0.8, "accel_fraction": 0.3,
    "cold_rise": 40.0, "resistance_rise_coefficient": 0.0037, "torque_constant_rise_coefficient": -0.001,
}

SPECIAL = {  # checked in dedicated tests below
    "magnet_coefficient", "insulation_class_temperature",
    "rms", "time_average", "energy_per_cycle",
    "periodic_winding_temperature", "transient_winding_temperature",
    "network_segment_maps", "network_capacity_maps", "network_peak_rise", "network_response", "hot_network_rise",
    "network_rise_path", "network_ramp_rise",
    "network_peak_rise_grid",
}

FUNCTIONS = sorted(name for name in ph.__all__
                   if inspect.isfunction(getattr(ph, name)) and name not in SPECIAL)


def numeric_parameters(function):
    return [p.name for p in inspect.signature(function).parameters.values()
            if p.name in VALUES]


def test_every_parameter_has_an_example_value():
    # Source: package contract (canonical parameter names); a new public
    # function with a new parameter name must be added to VALUES.
    for name in FUNCTIONS:
        function = getattr(ph, name)
        for p in inspect.signature(function).parameters.values():
            assert p.name in VALUES, f"{name}: add an example for {p.name!r}"


@pytest.mark.parametrize("name", FUNCTIONS)
def test_scalar_array_and_series(name):
    function = getattr(ph, name)
    params = numeric_parameters(function)
    base = {p: VALUES[p] for p in params}
    scalar = function(**base)
    assert isinstance(scalar, (float, bool)), f"{name} returned {type(scalar)}"
    assert not (isinstance(scalar, float) and np.isnan(scalar))
    factors = np.array([1.0, 1.1, 0.9])
    index = ["m1", "m2", "m3"]
    for p in params:
        expected = np.array([function(**{**base, p: base[p] * f}) for f in factors])
        as_array = function(**{**base, p: base[p] * factors})
        assert isinstance(as_array, np.ndarray) and as_array.shape == (3,)
        np.testing.assert_allclose(as_array, expected, rtol=1e-14)
        as_series = function(**{**base, p: pd.Series(base[p] * factors, index=index)})
        assert isinstance(as_series, pd.Series), f"{name}({p}=Series)"
        assert list(as_series.index) == index
        np.testing.assert_allclose(as_series.to_numpy(), expected, rtol=1e-14)
    # all parameters as arrays at once, and a column broadcast against a row
    everything = function(**{p: base[p] * factors for p in params})
    assert np.shape(everything) == (3,)
    if params:
        first = params[0]
        grid = function(**{**base, first: (base[first] * factors)[:, None]})
        assert np.shape(grid) == (3, 1)


def test_integer_inputs_give_floats():
    # Source: package contract (integers are converted to float).
    assert ph.friction_torque(2, 3) == 6.0 and isinstance(ph.friction_torque(2, 3), float)
    assert ph.stall_current(np.array([10, 20]), 4).tolist() == [2.5, 5.0]


def test_series_are_used_positionally_not_aligned():
    # Source: package contract; two Series with different indexes combine by
    # position (numpy semantics), the result carries the first Series' index.
    v = pd.Series([10.0, 20.0], index=["a", "b"])
    r = pd.Series([2.0, 4.0], index=["x", "y"])
    out = ph.stall_current(v, r)
    assert list(out.index) == ["a", "b"] and out.tolist() == [5.0, 5.0]


def test_string_table_lookups():
    # Source: MAGNET_MATERIALS / INSULATION_CLASSES tables (data walked by code).
    materials = ["ndfeb", "ferrite", "unknown"]
    scalar = [ph.magnet_coefficient(m) for m in materials]
    np.testing.assert_array_equal(ph.magnet_coefficient(np.array(materials)), scalar)
    series = ph.magnet_coefficient(pd.Series(materials, index=list("abc")))
    assert list(series.index) == list("abc")
    np.testing.assert_array_equal(series.to_numpy(), scalar)
    classes = ["B", "F", "H"]
    scalar = [ph.insulation_class_temperature(c) for c in classes]
    np.testing.assert_array_equal(ph.insulation_class_temperature(np.array(classes)),
                                  scalar)
    series = ph.insulation_class_temperature(pd.Series(classes))
    np.testing.assert_array_equal(series.to_numpy(), scalar)


def test_cycle_helpers_broadcast_over_leading_axes():
    # Source: definitions (IEC 60050-103) applied row by row.
    values = np.array([[2.0, 0.5, -1.5, 0.0], [1.0, 1.0, 1.0, 1.0], [0.0, 3.0, 0.0, 0.0]])
    durations = np.array([0.1, 0.5, 0.1, 0.3])
    for function in (ph.rms, ph.time_average, ph.energy_per_cycle):
        rows = function(values, durations)
        assert rows.shape == (3,)
        for k in range(3):
            assert rows[k] == pytest.approx(function(values[k], durations), rel=1e-14)
        as_series = function(pd.Series(values[0]), pd.Series(durations))
        assert isinstance(as_series, float)
        assert as_series == pytest.approx(rows[0], rel=1e-14)
        per_row_durations = function(values, np.broadcast_to(durations, values.shape))
        np.testing.assert_allclose(per_row_durations, rows, rtol=1e-14)


@pytest.mark.parametrize("function", [ph.periodic_winding_temperature,
                                      ph.transient_winding_temperature])
def test_thermal_profiles_broadcast_and_keep_series(function):
    # Source: consistency with scalar calls (the scalar results are checked
    # against solve_ivp in test_physics_thermal_simulation.py).
    durations, currents = [2.0, 6.0, 4.0], [4.0, 1.5, 0.0]
    motor = dict(terminal_resistance=2.0, thermal_resistance_winding_housing=2.0,
                 thermal_resistance_housing_ambient=6.0,
                 thermal_time_constant_winding=10.0, thermal_time_constant_motor=300.0,
                 ambient_temperature=313.15)
    scalar = function(durations, currents, **motor)
    assert isinstance(scalar, float)
    factors = np.array([1.0, 1.1, 0.9])
    for key in motor:
        expected = [function(durations, currents, **{**motor, key: motor[key] * f})
                    for f in factors]
        as_array = function(durations, currents, **{**motor, key: motor[key] * factors})
        np.testing.assert_allclose(as_array, expected, rtol=1e-13)
        series = function(durations, currents,
                          **{**motor, key: pd.Series(motor[key] * factors, index=list("xyz"))})
        assert isinstance(series, pd.Series) and list(series.index) == list("xyz")
        np.testing.assert_allclose(series.to_numpy(), expected, rtol=1e-13)
    profiles = np.array([currents, [1.0, 1.0, 1.0]])
    both = function(durations, profiles, **motor)
    assert both.shape == (2,)
    assert both[0] == pytest.approx(scalar, rel=1e-14)
    peak, trajectory = function(durations, profiles, **motor, trajectory=True,
                                samples_per_segment=5)
    assert trajectory.time.shape == (2, 16)
    assert trajectory.winding_temperature.shape == (2, 16)
    np.testing.assert_allclose(peak, both, rtol=1e-15)
    assert np.all(trajectory.winding_temperature <= peak[:, None] * (1 + 1e-12))
