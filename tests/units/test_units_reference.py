"""Every required spelling, checked against references computed without pint.

References come from scipy.constants (CODATA/NIST values and exact definitions)
unless a comment names another source; exact conversions use rel 1e-12.
"""
from __future__ import annotations

import math

import pytest
from scipy.constants import (
    arcmin,
    centi,
    convert_temperature,
    degree,
    foot,
    gram,
    inch,
    kilo,
    kilogram_force,
    micro,
    milli,
    minute,
    ounce,
    pi,
    pound,
    pound_force,
)
from scipy.constants import g as g_n

from catalog.units import parse_unit

REL = 1e-12
RPM = 2 * pi / minute  # scipy.constants: one revolution (2π rad) per minute [rad/s]
OZF = ounce * g_n  # scipy.constants: ounce-force = ounce·g_n [N]
GF = gram * g_n  # scipy.constants: gram-force [N]

CASES = [
    # --- torque [N·m] ---------------------------------------------------
    ("torque", "N·m", 1.0),  # SI
    ("torque", "Nm", 1.0),  # SI
    ("torque", "mNm", milli),  # scipy.constants milli
    ("torque", "mN·m", milli),  # scipy.constants milli
    ("torque", "mN*m", milli),  # scipy.constants milli
    ("torque", "N·cm", centi),  # scipy.constants centi
    ("torque", "N·mm", milli),  # scipy.constants milli
    ("torque", "oz-in", OZF * inch),  # scipy.constants ounce·g·inch
    ("torque", "oz·in", OZF * inch),  # scipy.constants ounce·g·inch
    ("torque", "ozf·in", OZF * inch),  # scipy.constants ounce·g·inch
    ("torque", "in-oz", OZF * inch),  # scipy.constants ounce·g·inch
    ("torque", "lbf·ft", pound_force * foot),  # scipy.constants pound_force·foot
    ("torque", "lb-ft", pound_force * foot),  # scipy.constants pound_force·foot
    ("torque", "lbf·in", pound_force * inch),  # scipy.constants pound_force·inch
    ("torque", "lb-in", pound_force * inch),  # scipy.constants pound_force·inch
    ("torque", "kgf·cm", kilogram_force * centi),  # scipy.constants kilogram_force·centi
    ("torque", "kg-cm", kilogram_force * centi),  # scipy.constants kilogram_force·centi
    ("torque", "gf·cm", GF * centi),  # scipy.constants gram·g·centi
    ("torque", "g-cm", GF * centi),  # scipy.constants gram·g·centi
    ("torque", "kg/cm", kilogram_force * centi),  # misprint read as kgf·cm; scipy.constants
    # --- angular speed [rad/s] -------------------------------------------
    ("angular_speed", "rpm", RPM),  # scipy.constants pi, minute
    ("angular_speed", "RPM", RPM),  # scipy.constants pi, minute
    ("angular_speed", "r/min", RPM),  # scipy.constants pi, minute
    ("angular_speed", "min^-1", RPM),  # scipy.constants pi, minute (revolutions implied)
    ("angular_speed", "1/min", RPM),  # scipy.constants pi, minute (revolutions implied)
    ("angular_speed", "krpm", kilo * RPM),  # scipy.constants kilo, pi, minute
    ("angular_speed", "rad/s", 1.0),  # SI
    ("angular_speed", "rev/s", 2 * pi),  # scipy.constants pi
    # --- back-EMF / torque constant [V·s/rad = N·m/A] -------------------
    ("torque_constant", "V/krpm", 1 / (kilo * RPM)),  # scipy.constants kilo, pi, minute
    ("torque_constant", "mV/rpm", milli / RPM),  # scipy.constants milli, pi, minute
    ("torque_constant", "V/(rad/s)", 1.0),  # SI
    ("torque_constant", "V·s/rad", 1.0),  # SI
    ("torque_constant", "N·m/A", 1.0),  # SI
    ("torque_constant", "mNm/A", milli),  # scipy.constants milli
    ("torque_constant", "oz-in/A", OZF * inch),  # scipy.constants ounce·g·inch
    # --- speed constant [(rad/s)/V] ---------------------------------------
    ("speed_constant", "rpm/V", RPM),  # scipy.constants pi, minute
    ("speed_constant", "(rad/s)/V", 1.0),  # SI
    # --- speed-torque gradient [(rad/s)/(N·m)] ---------------------------
    ("speed_torque_gradient", "rpm/mNm", RPM / milli),  # scipy.constants
    ("speed_torque_gradient", "rpm/(mN·m)", RPM / milli),  # scipy.constants
    ("speed_torque_gradient", "rpm/oz-in", RPM / (OZF * inch)),  # scipy.constants
    # --- inertia [kg·m²] ---------------------------------------------------
    ("inertia", "kg·m²", 1.0),  # SI
    ("inertia", "g·cm²", gram * centi**2),  # scipy.constants gram, centi
    ("inertia", "gcm²", gram * centi**2),  # scipy.constants gram, centi
    ("inertia", "g-cm^2", gram * centi**2),  # scipy.constants gram, centi
    ("inertia", "kg·cm²", centi**2),  # scipy.constants centi
    ("inertia", "oz·in²", ounce * inch**2),  # scipy.constants ounce, inch
    ("inertia", "oz-in-s²", OZF * inch),  # scipy.constants ounce·g·inch (force·length·time²)
    ("inertia", "lb·ft²", pound * foot**2),  # scipy.constants pound, foot
    ("inertia", "lbf·in·s²", pound_force * inch),  # scipy.constants pound_force, inch
    ("inertia", "gf·cm·s²", GF * centi),  # scipy.constants gram·g·centi
    # --- electrical ---------------------------------------------------------
    ("resistance", "Ω", 1.0),  # SI
    ("resistance", "ohm", 1.0),  # SI
    ("resistance", "Ohm", 1.0),  # SI
    ("resistance", "mΩ", milli),  # scipy.constants milli
    ("resistance", "mOhm", milli),  # scipy.constants milli
    ("inductance", "H", 1.0),  # SI
    ("inductance", "mH", milli),  # scipy.constants milli
    ("inductance", "µH", micro),  # scipy.constants micro (U+00B5 micro sign)
    ("inductance", "μH", micro),  # scipy.constants micro (U+03BC Greek mu)
    ("inductance", "uH", micro),  # scipy.constants micro
    ("voltage", "V", 1.0),  # SI
    ("voltage", "mV", milli),  # scipy.constants milli
    ("voltage", "VDC", 1.0),  # SI
    ("current", "A", 1.0),  # SI
    ("current", "mA", milli),  # scipy.constants milli
    # --- thermal resistance [K/W] (temperature differences) ---------------
    ("thermal_resistance", "K/W", 1.0),  # SI
    ("thermal_resistance", "°C/W", 1.0),  # SI: a Celsius degree step is one kelvin
    ("thermal_resistance", "°F/W",  # scipy.constants convert_temperature: size of 1 °F step
     convert_temperature(1.0, "F", "K") - convert_temperature(0.0, "F", "K")),
    # --- time, mass, length, angle -----------------------------------------
    ("time", "s", 1.0),  # SI
    ("time", "ms", milli),  # scipy.constants milli
    ("time", "min", minute),  # scipy.constants minute
    ("mass", "g", gram),  # scipy.constants gram
    ("mass", "kg", 1.0),  # SI
    ("mass", "oz", ounce),  # scipy.constants ounce
    ("mass", "lb", pound),  # scipy.constants pound
    ("length", "mm", milli),  # scipy.constants milli
    ("length", "m", 1.0),  # SI
    ("length", "in", inch),  # scipy.constants inch
    ("angle", "arcmin", arcmin),  # scipy.constants arcmin
    ("angle", "deg", degree),  # scipy.constants degree
    ("angle", "rad", 1.0),  # SI
    ("dimensionless", "%", 0.01),  # SI Brochure: per cent = 0.01
]


@pytest.mark.parametrize("dimension, spelling, factor", CASES, ids=[f"{d}:{s}" for d, s, _ in CASES])
def test_spelling_factor(dimension, spelling, factor):
    conv = parse_unit(spelling, dimension)
    assert conv.factor == pytest.approx(factor, rel=REL)
    assert conv.offset == 0.0


TEMPERATURES = [("°C", "C"), ("degC", "C"), ("C", "C"), ("K", "K"), ("°F", "F"), ("degF", "F")]


@pytest.mark.parametrize("spelling, scale", TEMPERATURES)
def test_absolute_temperature(spelling, scale):
    conv = parse_unit(spelling, "temperature")
    for value in (-40.0, 0.0, 25.0, 155.0):
        # scipy.constants.convert_temperature is the reference for each value
        assert conv.to_si(value) == pytest.approx(convert_temperature(value, scale, "K"), rel=REL)


# NIST SP 811 (2008) Appendix B.8, "Factors for units listed by kind of quantity";
# the table prints 7 significant digits, hence rel=5e-7.
NIST_B8 = [
    ("torque", "ozf·in", 7.061552e-3),  # NIST SP 811 (2008) App. B.8: ozf·in -> N·m
    ("torque", "lbf·in", 1.129848e-1),  # NIST SP 811 (2008) App. B.8: lbf·in -> N·m
    ("torque", "lbf·ft", 1.355818),  # NIST SP 811 (2008) App. B.8: lbf·ft -> N·m
    ("inertia", "lb·ft²", 4.214011e-2),  # NIST SP 811 (2008) App. B.8: lb·ft² -> kg·m²
    ("inertia", "lb·in²", 2.926397e-4),  # NIST SP 811 (2008) App. B.8: lb·in² -> kg·m²
    ("angular_speed", "r/min", 1.047198e-1),  # NIST SP 811 (2008) App. B.8: r/min -> rad/s
]


@pytest.mark.parametrize("dimension, spelling, factor", NIST_B8)
def test_nist_sp811_table(dimension, spelling, factor):
    assert parse_unit(spelling, dimension).factor == pytest.approx(factor, rel=5e-7)


def test_inertia_mixup_detector():
    """1 ozf·in·s² = g_n/0.0254 oz·in²: a force inertia read as a mass one is 386× off."""
    ratio = parse_unit("oz-in-s²", "inertia").factor / parse_unit("oz·in²", "inertia").factor
    assert ratio == pytest.approx(g_n / inch, rel=REL)  # scipy.constants g / inch
    assert ratio == pytest.approx(386.088582677165, rel=REL)  # g_n / 0.0254 m, both exact by definition


def test_back_emf_constant_value():
    v_krpm = parse_unit("V/krpm", "torque_constant").factor
    mv_rpm = parse_unit("mV/rpm", "torque_constant").factor
    assert v_krpm == pytest.approx(mv_rpm, rel=REL)
    assert v_krpm == pytest.approx(60 / (2000 * math.pi), rel=REL)  # definition: 1 V per 1000·2π/60 rad/s
    assert v_krpm == pytest.approx(0.009549296585513721, rel=REL)  # the brief's value, = 60/(2000π)
