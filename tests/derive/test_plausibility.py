"""Plausibility of single values (catalog.plausibility): one worked datasheet per check.

Each case states a plausible motor and the same motor with one value slipped the way it
happens on datasheets; the limit is computed here from its outside formula (named beside
it), unit factors from scipy.constants (CODATA / NIST SP 811).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants as sc

from catalog.derive import derive_columns
from catalog.plausibility import CHECKS, COPPER_DENSITY, check_named, implausible_values

MASS, DIAMETER, LENGTH = 0.20, 0.032, 0.060          # a 32 mm × 60 mm motor of 200 g (4.1 g/cm³)
J = 1.2e-5                                           # kg·m² (120 g·cm²)
KT = 0.0191                                          # N·m/A (Kv = 500 rpm/V)
KV = 500.0 * sc.pi / 30.0                            # 500 rpm/V in (rad/s)/V: 1 rpm = π/30 rad/s (NIST SP 811)
V, IN, TN, WN = 24.0, 1.6, 0.025, 1100.0             # nominal point: 27.5 W out of 38.4 W in


def found(**given):
    cols = {name: np.array([value], dtype=float) for name, value in given.items()}
    return implausible_values(derive_columns(cols))


def only(result, check_name):
    assert list(result.relation) == [check_name], list(result.relation)
    return result


# check name -> (plausible record, implausible record, expected limit of the implausible one)
CASES = {
    "rotor inertia at most a solid cylinder of the motor's mass and diameter": (
        dict(rotor_inertia=J, mass=MASS, diameter=DIAMETER),
        # 120 g·cm² written "0.17 oz·in²" typed as oz·in·s²: 386× (g0 per in/s²)
        dict(rotor_inertia=J / (sc.ounce * sc.inch ** 2) * sc.ounce * sc.g * sc.inch, mass=MASS, diameter=DIAMETER),
        MASS * (DIAMETER / 2) ** 2 / 2),                    # solid cylinder J = m·r²/2 (mechanics textbook)
    "winding thermal time constant at most the motor's": (
        dict(thermal_time_constant_winding=25.0, thermal_time_constant_motor=900.0),
        dict(thermal_time_constant_winding=25.0 * 60, thermal_time_constant_motor=900.0),   # minutes read as s
        900.0),
    "nominal input power at least the nominal output power": (
        dict(nominal_voltage=V, nominal_current=IN, nominal_torque=TN, nominal_speed=WN),
        dict(nominal_voltage=V, nominal_current=IN / 2, nominal_torque=TN, nominal_speed=WN),
        TN * WN / V),                                         # P_in = V·I ≥ P_out = T·ω (energy conservation)
    "maximum efficiency at least the efficiency of the nominal point": (
        dict(nominal_voltage=V, nominal_current=IN, nominal_torque=TN, nominal_speed=WN, max_efficiency=0.78),
        dict(nominal_voltage=V, nominal_current=IN, nominal_torque=TN, nominal_speed=WN, max_efficiency=0.55),
        TN * WN / (V * IN)),
    "speed constant × torque constant at most √6 (SI)": (
        dict(speed_constant=KV, torque_constant=KT),
        dict(speed_constant=500.0, torque_constant=KT),      # 500 rpm/V stored as 500 rad/s/V
        math.sqrt(6.0) / KT),
    "speed constant × torque constant at least 1/√6 (SI)": (
        dict(speed_constant=KV, torque_constant=KT),
        dict(speed_constant=KV / 60.0, torque_constant=KT),  # per minute read as per second
        1.0 / (math.sqrt(6.0) * KT)),
    "no-load current below the nominal current": (
        dict(no_load_current=0.08, nominal_current=IN),
        dict(no_load_current=0.08 * 1000, nominal_current=IN),   # 80 mA read as 80 A
        IN),
    "nominal torque below the stall torque": (
        dict(nominal_torque=TN, stall_torque=0.45),
        dict(nominal_torque=TN * 100, stall_torque=0.45),    # N·cm read as N·m
        0.45),
    "nominal speed below the no-load speed": (
        dict(nominal_speed=WN, no_load_speed=1250.0),
        dict(nominal_speed=WN * 30 / sc.pi, no_load_speed=1250.0),   # the rpm number read as rad/s
        1250.0),
    "mass at most that of a copper cylinder of the motor's size": (
        dict(mass=MASS, diameter=DIAMETER, length=LENGTH),
        dict(mass=MASS / sc.ounce * sc.pound, diameter=DIAMETER, length=LENGTH),  # 7.05 oz typed as 7.05 lb
        COPPER_DENSITY * sc.pi * (DIAMETER / 2) ** 2 * LENGTH),   # copper 8.96 g/cm³ (CRC Handbook, from memory)
    "mass at least that of a water cylinder of the motor's size": (
        dict(mass=MASS, diameter=DIAMETER, length=LENGTH),
        dict(mass=MASS / 1000, diameter=DIAMETER, length=LENGTH),   # "0.2" kg typed in a gram column
        1000.0 * sc.pi * (DIAMETER / 2) ** 2 * LENGTH),           # water 1 g/cm³
}


def test_every_check_has_a_case_and_a_documented_argument():
    assert set(CASES) == {c.name for c in CHECKS}
    for c in CHECKS:
        doc = c.limit.__doc__ or ""
        assert "[" in doc.split("\n")[0], f"{c.name}: the limit's unit in the first line"
        assert len(doc.split("\n\n")) >= 2, f"{c.name}: the physical argument after the first paragraph"


@pytest.mark.parametrize("name", sorted(CASES))
def test_check_flags_the_slip_and_passes_the_plausible_value(name):
    good, bad, limit = CASES[name]
    assert len(found(**good).idx) == 0
    result = only(found(**bad), name)
    check = check_named(name)
    assert result.field[0] == check.field
    assert result.implied[0] == pytest.approx(limit, rel=1e-12)
    assert result.value[0] == pytest.approx(bad[check.field], rel=1e-12)
    assert result.residual[0] == pytest.approx(bad[check.field] / limit - 1.0, rel=1e-12)
    assert set(result.given[0].split(", ")) == set(bad)


def test_oz_in2_typed_as_oz_in_s2_exceeds_the_cylinder_by_the_factor_g0_per_inch():
    good, bad, limit = CASES["rotor inertia at most a solid cylinder of the motor's mass and diameter"]
    assert bad["rotor_inertia"] / good["rotor_inertia"] == pytest.approx(sc.g / sc.inch, rel=1e-12)  # 386.09


def test_brushless_constants_on_a_line_to_line_basis_are_plausible():
    # Kt [N·m/A rms] = √3·Ke [V rms line-to-line·s/rad] for a sinusoidal PM motor (textbook of PM
    # machines, from memory): Kv·Kt = √3 is a definition, not a slip
    cols = {"speed_constant": np.array([KV]), "torque_constant": np.array([KT * math.sqrt(3.0)])}
    texts = {"constant_basis": np.array(["line-to-line-rms"], dtype=object)}
    assert len(implausible_values(derive_columns(cols, texts)).idx) == 0


def test_values_within_the_tolerance_of_the_limit_pass():
    # a winding constant 5 % above the motor's is within the datasheets' rounding: not flagged
    assert len(found(thermal_time_constant_winding=945.0, thermal_time_constant_motor=900.0).idx) == 0
    assert len(found(thermal_time_constant_winding=1000.0, thermal_time_constant_motor=900.0).idx) == 1


def test_demo_catalogue_is_plausible():
    # the invented catalogue is physically consistent (sample_catalog/generate.py): no check fires
    import catalog
    from catalog.demo import build

    import tempfile
    from pathlib import Path

    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / "demo.duckdb"
        build(path, out=lambda *a: None)
        flags = catalog.open(path).check()
    assert not [str(f) for f in flags if check_named(f.relation) is not None]


def test_import_reports_the_implausible_value_with_its_limit(cat, write):
    head = "manufacturer,part_number,rotor_inertia [oz*in*s^2],mass [g],diameter [mm]\n"
    report = cat.import_([write("m.csv", head + "Testwerk Antriebe,TP-1,0.17,250,32\n")])
    assert len(report.flags) == 1
    text = str(report.flags[0])
    assert text.startswith("testwerk-tp-1: rotor inertia at most a solid cylinder of the motor's mass and "
                           "diameter: rotor_inertia given ")
    assert ", the limit is 320 g·cm² (" in text                 # m·D²/8 = 0.25·0.032²/8 kg·m²
    assert [str(f) for f in cat.check()] == [text]
