"""Physics functions against published or exactly known reference values.

Every check names its outside source.  Where the reference is exact (a
closed-form value), the tolerance is 1e-9 or tighter; where it is a number
printed to a few digits, the tolerance matches those digits.
"""

import math

import numpy as np
import pytest
import scipy.constants as sc

from catalog import physics as ph

RPM = 2.0 * sc.pi / sc.minute        # 1 rpm in rad/s (from π/30, scipy.constants)
ZERO_C = sc.zero_Celsius


# --- IEC 60028: international standard of resistance for copper -------------

@pytest.mark.parametrize("celsius, ratio", [(75.0, 1.21615), (100.0, 1.31440),
                                            (155.0, 1.53055)])
def test_iec_60028_copper_resistance_ratios(celsius, ratio):
    # Source: IEC 60028, R(θ)/R(20 °C) = 1 + 0.00393·(θ − 20) (annealed copper);
    # the printed ratios are exact decimal values of that line.
    r20 = 1.0
    got = ph.resistance_at_temperature(r20, ZERO_C + celsius, ZERO_C + 20.0)
    assert got == pytest.approx(ratio, rel=1e-9)


def test_iec_60028_rereferencing_from_25_celsius_is_consistent():
    # Source: IEC 60028 copper line; a record stated at 25 °C must give the
    # same hot resistance as the same winding stated at 20 °C.
    r20 = 0.8
    r25 = r20 * (1.0 + 0.00393 * 5.0)
    for celsius, ratio in [(75.0, 1.21615), (100.0, 1.31440), (155.0, 1.53055)]:
        got = ph.resistance_at_temperature(r25, ZERO_C + celsius)   # default 25 °C
        assert got == pytest.approx(r20 * ratio, rel=1e-12)
    alpha25 = ph.rereference_temperature_coefficient(0.00393, ZERO_C + 20.0, ZERO_C + 25.0)
    assert alpha25 == pytest.approx(0.00393 / 1.01965, rel=1e-12)
    assert ph.resistance_at_reference_temperature(r20 * 1.21615, ZERO_C + 75.0) == \
        pytest.approx(r25, rel=1e-12)
    assert ph.winding_temperature_from_resistance(r20 * 1.53055, r25) == \
        pytest.approx(ZERO_C + 155.0, rel=1e-12)
    assert ph.COPPER_TEMPERATURE_COEFFICIENT == 0.00393


def test_iec_60034_resistance_method_uses_235_for_copper():
    # Source: IEC 60034-1 resistance method, θ2 = (R2/R1)·(235 + θ1) − 235;
    # 1/0.00393 − 20 = 234.45, so the two agree to within 0.6 K at 155 °C.
    r1, theta1, theta2 = 1.0, 20.0, 155.0
    r2 = r1 * (235.0 + theta2) / (235.0 + theta1)
    got = ph.winding_temperature_from_resistance(r2, r1, ZERO_C + theta1) - ZERO_C
    assert abs(got - theta2) < 0.6


# --- IEC 60085:2007 thermal classes ------------------------------------------

def test_iec_60085_thermal_classes():
    # Source: IEC 60085:2007, table of thermal classes (°C).
    celsius = {"Y": 90, "A": 105, "E": 120, "B": 130, "F": 155, "H": 180,
               "N": 200, "R": 220}
    assert set(ph.INSULATION_CLASSES) == set(celsius)
    for letter, value in celsius.items():
        assert ph.INSULATION_CLASSES[letter] == pytest.approx(value + ZERO_C, abs=1e-12)
        assert ph.insulation_class_temperature(letter) == ph.INSULATION_CLASSES[letter]
        assert ph.insulation_class_temperature(str(value)) == ph.INSULATION_CLASSES[letter]
    assert ph.insulation_class_temperature("f") == 155 + ZERO_C
    assert math.isnan(ph.insulation_class_temperature(None))
    with pytest.raises(ValueError):
        ph.insulation_class_temperature("Z")


# --- Magnet coefficients (typical values, IEC 60404-8-1 materials) ------------

def test_magnet_table_keys_and_ordering():
    # Source: schema magnet-material enum; typical values lie inside their range.
    assert set(ph.MAGNET_MATERIALS) == {"ndfeb", "ndfeb_bonded", "smco", "ferrite",
                                        "alnico", "unknown"}
    for key, entry in ph.MAGNET_MATERIALS.items():
        if key == "unknown":
            continue
        assert entry["most_negative"] <= entry["typical"] <= entry["least_negative"] < 0
    assert ph.magnet_coefficient("ndfeb") == pytest.approx(-0.0010, abs=1e-15)
    assert ph.magnet_coefficient("ferrite") == pytest.approx(-0.0020, abs=1e-15)
    assert ph.magnet_coefficient("ndfeb", bound="most_negative") == -0.0013
    assert math.isnan(ph.magnet_coefficient("unknown"))
    assert math.isnan(ph.magnet_coefficient(None))
    assert ph.magnet_coefficient("unknown", missing=ph.CONSERVATIVE_MAGNET_COEFFICIENT) \
        == ph.CONSERVATIVE_MAGNET_COEFFICIENT == -0.0020
    with pytest.raises(ValueError):
        ph.magnet_coefficient("neodymium")
    with pytest.raises(ValueError):
        ph.magnet_coefficient("ndfeb", bound="worst")


def test_torque_constant_at_temperature():
    # Source: exact linear law Kt(T) = Kt(Tref)·(1 + β·(T − Tref)).
    hot = ph.torque_constant_at_temperature(0.05, ZERO_C + 100.0,
                                            ph.magnet_coefficient("ndfeb"))
    assert hot == pytest.approx(0.05 * (1.0 - 0.0010 * 75.0), rel=1e-12)
    assert math.isnan(ph.torque_constant_at_temperature(
        0.05, ZERO_C + 100.0, ph.magnet_coefficient("unknown")))


# --- Speed constant rule of thumb and the V/krpm conversion --------------------

def test_speed_constant_rule_of_thumb():
    # Source: common practice, no source: Kt [N·m/A] ≈ 9.549 / Kv [rpm/V].
    kv_rpm_per_volt = 1000.0
    kt = ph.torque_constant_from_speed_constant(kv_rpm_per_volt * RPM)
    assert kt == pytest.approx(9.549 / kv_rpm_per_volt, rel=1e-4)
    # Source: π/30 from scipy.constants: 1 V/krpm = 0.009549296585513721 V·s/rad.
    ke = ph.back_emf_constant_from_speed_constant(1000.0 * RPM)
    assert ke == pytest.approx(0.009549296585513721, rel=1e-15)
    assert ph.speed_constant_from_back_emf_constant(ke) == pytest.approx(1000 * RPM,
                                                                         rel=1e-15)


# --- Worked example: Modelica Standard Library, Electrical.Machines,
#     DcPermanentMagnetData (published parameter set) ---------------------------
# Va = 100 V, Ia = 100 A, 1425 rpm, Ra = 0.05 Ω, La = 1.5 mH, J = 0.15 kg·m²,
# no losses other than armature copper (I0 = 0).

VA, IA, WN, RA, LA, JR = 100.0, 100.0, 1425.0 * RPM, 0.05, 0.0015, 0.15


def test_modelica_dc_permanent_magnet_data():
    ke = ph.back_emf_constant_from_operating_point(VA, IA, WN, RA)
    kt = ph.torque_constant_from_back_emf_constant(ke)
    assert ke == pytest.approx(2.0 / math.pi, rel=1e-12)          # exact
    assert kt == pytest.approx(2.0 / math.pi, rel=1e-12)
    torque = ph.torque_at_current(IA, kt, 0.0)
    assert torque == pytest.approx(63.662, abs=5e-4)              # printed
    assert torque == pytest.approx(200.0 / math.pi, rel=1e-12)    # exact
    assert ph.no_load_speed(VA, RA, 0.0, ke) / RPM == pytest.approx(1500.0, rel=1e-12)
    assert ph.speed_constant_from_back_emf_constant(ke) / RPM == pytest.approx(15.0,
                                                                              rel=1e-12)
    stall_i = ph.stall_current(VA, RA)
    assert stall_i == pytest.approx(2000.0, rel=1e-12)
    stall_t = ph.stall_torque(kt, stall_i, 0.0)
    # printed values: within half a unit of the last printed digit;
    # exact closed forms (Ke = 2/π): to 1e-12
    assert stall_t == pytest.approx(1273.2395, abs=5e-5)
    assert stall_t == pytest.approx(4000.0 / math.pi, rel=1e-12)
    gradient = ph.speed_torque_gradient(RA, kt, ke)
    assert gradient == pytest.approx(0.12337006, abs=5e-9)
    assert gradient == pytest.approx(RA * math.pi ** 2 / 4.0, rel=1e-12)
    km = ph.motor_constant(kt, RA)
    assert km == pytest.approx(2.847050, abs=5e-7)
    assert km == pytest.approx(2.0 / math.pi / math.sqrt(RA), rel=1e-12)
    tau_m = ph.mechanical_time_constant(JR, RA, kt, ke)
    assert tau_m == pytest.approx(0.01850551, abs=5e-9)
    assert tau_m == pytest.approx(JR * RA * math.pi ** 2 / 4.0, rel=1e-12)
    assert ph.electrical_time_constant(LA, RA) == pytest.approx(0.030, rel=1e-12)
    assert ph.efficiency_at_current(IA, 0.0, stall_i) == pytest.approx(0.95, rel=1e-12)
    assert ph.speed_at_torque(torque, VA, RA, kt, ke, 0.0) == pytest.approx(WN, rel=1e-12)
    assert ph.voltage_at_torque_and_speed(torque, WN, RA, kt, ke, 0.0) == \
        pytest.approx(VA, rel=1e-12)
    assert ph.resistance_from_operating_point(VA, IA, WN, ke) == pytest.approx(RA,
                                                                               rel=1e-9)


# --- Electric Machinery, 6th ed. (a standard DC-machine textbook), Example 7.10,
#     quoted from memory: Ra = 1.03 Ω; no load on 50 V at 2100 r/min, 1.25 A ---

def test_electric_machinery_example_7_10_no_load_test():
    speed = 2100.0 * RPM
    ke = ph.back_emf_constant_from_no_load_speed(speed, 50.0, 1.03, 1.25)
    assert ke == pytest.approx(0.22151, abs=5e-6)                 # printed
    assert ke == pytest.approx((50.0 - 1.03 * 1.25) / speed, rel=1e-15)
    loss = ph.no_load_rotational_loss(50.0, 1.03, 1.25)
    assert loss == pytest.approx(60.89, abs=5e-3)                 # printed
    assert loss == pytest.approx(60.890625, rel=1e-15)            # exact
    assert ph.friction_torque(ke, 1.25) * speed == pytest.approx(loss, rel=1e-12)


# --- Exact small examples -------------------------------------------------------

def test_max_efficiency_example():
    # Source: exact closed form: I0 = 0.1 A, Is = 10 A → I = 1 A, ηmax = 0.81.
    assert ph.max_efficiency_current(0.1, 10.0) == pytest.approx(1.0, rel=1e-15)
    assert ph.max_efficiency(0.1, 10.0) == pytest.approx(0.81, rel=1e-14)
    assert ph.efficiency_at_current(1.0, 0.1, 10.0) == pytest.approx(0.81, rel=1e-14)
    currents = np.linspace(0.2, 9.0, 89)
    assert np.all(ph.efficiency_at_current(currents, 0.1, 10.0) <= 0.81 + 1e-15)
    assert ph.efficiency_at_current(np.array([0.0, 0.05, 11.0]), 0.1, 10.0).tolist() \
        == [0.0, 0.0, 0.0]


def test_rms_torque_example():
    # Source: IEC 60050-103 definition; Σ T²·t = 0.75 N²·m²·s over 1 s.
    values, durations = [2.0, 0.5, -1.5, 0.0], [0.1, 0.5, 0.1, 0.3]
    assert ph.rms(values, durations) == pytest.approx(0.866025, rel=1e-6)
    assert ph.rms(values, durations) == pytest.approx(math.sqrt(0.75), rel=1e-14)
    assert ph.time_average(values, durations) == pytest.approx(0.3, rel=1e-14)


def test_inertia_matching_example():
    # Source: exact: √(8e-3 / 2e-5) = 20.
    assert ph.optimal_ratio_inertial(2e-5, 8e-3) == pytest.approx(20.0, rel=1e-14)
    n = ph.optimal_ratio_inertial(2e-5, 8e-3, 0.5e-5)
    assert n == pytest.approx(math.sqrt(8e-3 / 2.5e-5), rel=1e-14)
    # reflected load inertia equals motor-side inertia at the optimum
    assert 8e-3 / n ** 2 == pytest.approx(2.5e-5, rel=1e-12)


def test_max_output_power_identity():
    # Source: exact algebra (documented in max_output_power): with friction
    # counted at stall, Pmax = ω0·Ts/4 = (V − R·I0)²/(4R) when Kt = Ke.
    v, r, kt, i0 = 24.0, 1.7, 0.04, 0.12
    w0 = ph.no_load_speed(v, r, i0, kt)
    ts = ph.stall_torque(kt, ph.stall_current(v, r), i0)
    pmax = ph.max_output_power(v, r, i0)
    assert pmax == pytest.approx(w0 * ts / 4.0, rel=1e-13)
    assert ph.max_output_power_from_no_load_speed_and_stall_torque(w0, ts) == \
        pytest.approx(pmax, rel=1e-13)
    torques = np.linspace(0.0, ts, 2001)
    power = torques * ph.speed_at_torque(torques, v, r, kt, kt, i0)
    assert power.max() == pytest.approx(pmax, rel=1e-12)       # at T = Ts/2 (grid point)
