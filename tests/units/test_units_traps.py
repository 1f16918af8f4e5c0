"""One test per trap that pint alone would fall into, plus the error contract."""
from __future__ import annotations

import math
import pickle

import pytest
from scipy import constants
from scipy.constants import centi, convert_temperature, inch, kilogram_force, minute, ounce, pi
from scipy.constants import g as g_n

from catalog.errors import MotorshelfError
from catalog.units import (
    DIMENSIONS,
    UnitError,
    dimension_noun,
    parse_number,
    parse_quantity,
    parse_unit,
    split_value_unit,
)

REL = 1e-12


def test_hyphen_is_never_minus():
    assert split_value_unit("12 V-V") == (12.0, "V-V")
    with pytest.raises(UnitError) as e:
        parse_quantity("12 V-V", "voltage")  # V·V is not a voltage, and never 11 V
    assert "'12 V-V'" in str(e.value) and "expected a voltage" in str(e.value)
    # scipy.constants ounce·g·inch: the hyphen in oz-in multiplies
    assert parse_quantity("12.5 oz-in", "torque") == pytest.approx(12.5 * ounce * g_n * inch, rel=REL)
    assert parse_quantity("-40 °C", "temperature") == pytest.approx(
        convert_temperature(-40.0, "C", "K"), rel=REL)  # scipy.constants convert_temperature


def test_decimal_comma_is_an_error():
    with pytest.raises(UnitError, match=r"decimal comma in '1,5': write 1\.5"):
        parse_number("1,5")
    with pytest.raises(UnitError, match="decimal comma"):
        split_value_unit("1,5 mH")


@pytest.mark.parametrize("text", ["1,500", "1 500", "1'500", "1 500 rpm", "1,500.5 rpm"])
def test_thousands_separator_is_an_error(text):
    with pytest.raises(UnitError, match="thousands separator"):
        split_value_unit(text)


def test_mNm_is_millinewton_metre():
    conv = parse_unit("mNm", "torque")
    assert conv.factor == pytest.approx(1e-3, rel=REL)  # SI prefix milli
    assert conv.canonical == "mN*m"


def test_prefix_and_word_lookalikes():
    assert parse_unit("mm", "length").factor == pytest.approx(1e-3, rel=REL)  # SI prefix milli
    assert parse_unit("ms", "time").factor == pytest.approx(1e-3, rel=REL)  # millisecond, not m·s
    assert parse_unit("min", "time").factor == pytest.approx(minute, rel=REL)  # scipy.constants minute
    assert parse_unit("MΩ", "resistance").factor == pytest.approx(1e6, rel=REL)  # SI prefix mega
    assert parse_unit("mΩ", "resistance").factor == pytest.approx(1e-3, rel=REL)  # SI prefix milli
    with pytest.raises(UnitError):
        parse_unit("mm", "time")


def test_bare_C_only_in_temperature_fields():
    conv = parse_unit("C", "temperature")
    assert conv.to_si(25.0) == pytest.approx(convert_temperature(25.0, "C", "K"), rel=REL)  # scipy
    for dim in ("torque", "current", "inertia"):
        with pytest.raises(UnitError, match="temperature fields only"):
            parse_unit("C", dim)  # never coulomb


def test_degC_per_watt_is_a_difference():
    conv = parse_unit("°C/W", "thermal_resistance")
    assert (conv.factor, conv.offset) == (1.0, 0.0)  # SI: a Celsius step is one kelvin


def test_reciprocal_minute_means_rpm():
    # scipy.constants pi, minute: a revolution per minute, not 1/60 rad/s
    assert parse_unit("1/min", "angular_speed").factor == pytest.approx(2 * pi / minute, rel=REL)
    assert parse_unit("min-1", "angular_speed").factor == pytest.approx(2 * pi / minute, rel=REL)
    # V·min is per revolution in the back-EMF field
    assert parse_unit("V·min", "torque_constant").factor == pytest.approx(minute / (2 * pi), rel=REL)


@pytest.mark.parametrize("spelling", ["Hz", "1/s", "s^-1"])
def test_hz_and_reciprocal_second_are_ambiguous_speeds(spelling):
    with pytest.raises(UnitError, match="rev/s or rad/s") as e:
        parse_unit(spelling, "angular_speed")
    assert e.value.kind == "ambiguous"


@pytest.mark.parametrize("spelling, meant", [("kg/cm", kilogram_force * centi),  # scipy kgf·cm
                                             ("g/cm", 1e-3 * g_n * centi),  # scipy g·centi
                                             ("oz/in", ounce * g_n * inch)])  # scipy ounce·g·inch
def test_torque_misprints_read_with_warning(spelling, meant):
    conv = parse_unit(spelling, "torque")
    assert conv.factor == pytest.approx(meant, rel=REL)
    assert len(conv.warnings) == 1 and spelling in conv.warnings[0]


def test_misprint_only_in_torque_fields():
    with pytest.raises(UnitError):
        parse_unit("kg/cm", "inertia")


def test_mass_or_force_by_dimension():
    assert parse_unit("lb", "mass").canonical == "lb"
    assert parse_unit("lb-ft", "torque").canonical == "lbf*ft"
    assert parse_unit("oz·in²", "inertia").canonical == "oz*in**2"
    assert parse_unit("oz-in-s²", "inertia").canonical == "ozf*in*s**2"
    with pytest.raises(UnitError, match="'oz' is a mass or a force, expected a torque"):
        parse_unit("oz", "torque")


def test_case_folding_only_for_unprefixed_words():
    assert parse_unit("OZ-IN", "torque").factor == pytest.approx(ounce * g_n * inch, rel=REL)  # scipy
    with pytest.raises(UnitError):
        parse_unit("MNM", "torque")


def test_glued_digit_power_and_powers():
    ref = 1e-3 * centi**2  # scipy.constants centi: g·cm²
    for s in ("gcm2", "gcm²", "g*cm**2", "g.cm^2", "g·cm^(2)"):
        assert parse_unit(s, "inertia").factor == pytest.approx(ref, rel=REL), s
    with pytest.raises(UnitError):
        parse_unit("mN2", "torque")


def test_division_reading_chosen_by_dimension():
    # rpm/oz-in is rpm/(ozf·in), the only reading that is a speed-torque gradient
    ref = 2 * pi / minute / (ounce * g_n * inch)  # scipy.constants
    assert parse_unit("rpm/oz-in", "speed_torque_gradient").factor == pytest.approx(ref, rel=REL)
    with pytest.raises(UnitError) as e:
        parse_unit("%/%·%", "dimensionless")  # (a/b)·c = 1 % vs a/(b·c) = 100: both ratios
    assert e.value.kind == "ambiguous"


def test_error_messages_and_attributes():
    with pytest.raises(UnitError) as e:
        parse_quantity("12 N*m", "angular_speed")
    err = e.value
    assert str(err) == "'12 N*m' is a torque, expected a speed"
    assert (err.found, err.expected, err.kind) == ("a torque", "a speed", "dimension")
    assert isinstance(err, MotorshelfError) and isinstance(err, ValueError)
    with pytest.raises(UnitError) as e:
        parse_unit("furlong/fortnight", "angular_speed")
    assert str(e.value) == "unknown unit 'furlong/fortnight', expected a speed such as rpm or rad/s"
    again = pickle.loads(pickle.dumps(e.value))
    assert str(again) == str(e.value) and again.kind == "unknown"


def test_angles_are_counted():
    with pytest.raises(UnitError, match="times an angle"):
        parse_unit("N·m·rad", "torque")
    with pytest.raises(UnitError, match="'rad' is an angle, expected a ratio"):
        parse_unit("rad", "dimensionless")


def test_absolute_temperature_takes_one_unit():
    with pytest.raises(UnitError):
        parse_unit("°C/W", "temperature")
    assert parse_unit("°F", "temperature_difference").factor == pytest.approx(
        convert_temperature(1.0, "F", "K") - convert_temperature(0.0, "F", "K"), rel=REL)  # scipy


def test_motor_constant_roots():
    for s in ("mNm/√W", "mN·m/sqrt(W)", "mN*m/W^0.5", "mN*m/W^(1/2)", "mN·m·W^-0.5"):
        assert parse_unit(s, "motor_constant").factor == pytest.approx(1e-3, rel=REL), s  # SI milli


def test_dimension_table():
    for name in ("torque", "angular_speed", "current", "voltage", "resistance", "inductance",
                 "inertia", "mass", "length", "time", "temperature", "temperature_difference",
                 "thermal_resistance", "power", "energy", "torque_constant", "speed_constant",
                 "speed_torque_gradient", "angle", "angular_acceleration", "force", "linear_speed",
                 "dimensionless"):
        d = DIMENSIONS[name]
        assert d.name == name and d.noun == dimension_noun(name) and d.example
        conv = parse_unit(d.si_unit, name)
        assert math.isclose(conv.factor, 1.0, rel_tol=REL) and conv.offset == 0.0
    assert DIMENSIONS["torque"].si_unit == "N*m" and DIMENSIONS["torque"].noun == "a torque"


def test_count_takes_no_unit():
    assert parse_quantity("4", "count") == 4.0
    with pytest.raises(UnitError):
        parse_unit("%", "count")


@pytest.mark.parametrize("text, dimension, si", [
    ("12 N", "force", 12.0),
    ("1.5 kN", "force", 1500.0),
    ("3 lbf", "force", 3 * constants.pound * constants.g),      # scipy: pound-force = lb·g_n
    ("2 kgf", "force", 2 * constants.g),                         # scipy g_n (CGPM 1901)
    ("2 kg", "force", 2 * constants.g),                          # a mass unit in a force field: kgf
    ("250 mm/s", "linear_speed", 0.25),
    ("12 m/min", "linear_speed", 12 / 60),
    ("20 in/s", "linear_speed", 20 * constants.inch),            # scipy inch
    ("30 ft/min", "linear_speed", 30 * constants.foot / constants.minute),
])
def test_force_and_linear_speed(text, dimension, si):
    assert parse_quantity(text, dimension) == pytest.approx(si, rel=REL)


@pytest.mark.parametrize("text, dimension, message", [
    ("100 rpm", "linear_speed", "'100 rpm' is a speed, expected a linear speed"),
    ("1/min", "linear_speed", None),
    ("5 N*m", "force", "'5 N*m' is a torque, expected a force"),
    ("200 mm", "angle", "'200 mm' is a length, expected an angle"),
])
def test_linear_and_angular_quantities_are_not_confused(text, dimension, message):
    with pytest.raises(UnitError) as info:
        parse_quantity(text, dimension)
    if message:
        assert str(info.value) == message


# -- messages in words, never the unit library's internals ----------------------------------------
@pytest.mark.parametrize("spelling, dimension, message", [
    ("W/K", "thermal_resistance", "'W/K' is a thermal conductance (the reciprocal of a thermal resistance), "
                                  "expected a thermal resistance: a thermal resistance is K/W or °C/W"),
    ("N", "torque", "'N' is a force, expected a torque"),     # force is a schema noun (mechanisms): no hint
    ("m^3", "mass", "'m^3' is a volume, expected a mass: a mass is g or oz"),
    ("1/Ohm", "resistance", "'1/Ohm' is an electric conductance (the reciprocal of a resistance), expected a "
                            "resistance: a resistance is ohm or mOhm"),
    ("V/A/s", "inductance", "'V/A/s' is a quantity of length² × mass / (current² × time⁴), expected an "
                            "inductance: an inductance is mH or uH"),
    ("N*m", "angular_speed", "'N*m' is a torque, expected a speed"),       # a schema noun: no hint needed
])
def test_wrong_dimension_said_in_words(spelling, dimension, message):
    with pytest.raises(UnitError) as exc:
        parse_unit(spelling, dimension)
    assert str(exc.value) == message
    assert "[" not in str(exc.value) and "**" not in str(exc.value) and "dimension" not in str(exc.value)


@pytest.mark.parametrize("cell", ["2024-05-01", "2024-05-01 00:00:00", "2024-5-1"])
def test_a_date_in_a_number_column_says_it_is_a_date(cell):
    from catalog.units import parse_cells, parse_quantity

    got = parse_cells([cell, "12 mN*m"], "torque")
    assert [i for i, _ in got.errors] == [0]
    assert got.errors[0][1].startswith(f"'{cell}' is a date, expected a torque such as mN*m or oz-in: a spreadsheet")
    assert "unit" not in got.errors[0][1].split(":")[0]
    assert got.si[1] == pytest.approx(0.012)
    with pytest.raises(UnitError, match="is a date"):
        parse_quantity(cell, "torque")
