"""Cells, columns and display: strict numbers, one Conversion per spelling, round trips."""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.constants import convert_temperature, inch, milli, minute, ounce, pi
from scipy.constants import g as g_n

import catalog.units.values as values_mod
from catalog.units import (
    DIMENSIONS,
    PRESETS,
    UnitError,
    convert_column,
    display_unit,
    parse_cells,
    parse_number,
    parse_quantity,
    parse_unit,
    split_value_unit,
    to_display,
)

REL = 1e-12
RPM = 2 * pi / minute  # scipy.constants pi, minute
OZF_IN = ounce * g_n * inch  # scipy.constants ounce·g·inch


@pytest.mark.parametrize("text, value", [("12.5", 12.5), ("-3", -3.0), ("1e-3", 1e-3),
                                         ("1.5E+2", 150.0), (" 7 ", 7.0), ("+2", 2.0)])
def test_parse_number_accepts(text, value):
    assert parse_number(text) == value


@pytest.mark.parametrize("text", ["", "   ", None])
def test_parse_number_missing(text):
    assert parse_number(text) is None


@pytest.mark.parametrize("text", ["nan", "NaN", "inf", "-inf", "1,5", "1,500", "1 500", "abc", "1.2.3"])
def test_parse_number_rejects(text):
    with pytest.raises(UnitError):
        parse_number(text)


@pytest.mark.parametrize("text, expected", [
    ("12.5 oz-in", (12.5, "oz-in")), ("12.5oz-in", (12.5, "oz-in")), ("12.5 mNm", (12.5, "mNm")),
    ("-40 °C", (-40.0, "°C")), ("1.2e-3 kg·m²", (1.2e-3, "kg·m²")), ("12 V-V", (12.0, "V-V")),
    ("10 1/min", (10.0, "1/min")), ("3", (3.0, None)), ("", (None, None)), (2.5, (2.5, None)),
])
def test_split_value_unit(text, expected):
    assert split_value_unit(text) == expected


def test_parse_cells_column():
    cells = ["1000 rpm", "12 N*m", "2 krpm", None, "", "1,5 rpm", "7", 3.0, "2 furlong"]
    r = parse_cells(cells, "angular_speed")
    si, numbers, units, errors, warnings = r  # unpacks like a tuple
    assert si[0] == pytest.approx(1000 * RPM, rel=REL)  # scipy.constants pi, minute
    assert si[2] == pytest.approx(2000 * RPM, rel=REL)  # scipy.constants pi, minute
    assert np.isnan(si[[1, 3, 4, 5, 6, 7, 8]]).all()
    assert numbers[0] == 1000.0 and np.isnan(numbers[3])
    assert units[:3] == ["rpm", "N*m", "krpm"] and units[3] is None
    msgs = dict(errors)
    assert msgs[1] == "'12 N*m' is a torque, expected a speed"
    assert "decimal comma" in msgs[5]
    assert msgs[6] == "no unit given, expected a speed such as rpm or rad/s"
    assert msgs[8] == "unknown unit 'furlong', expected a speed such as rpm or rad/s"
    assert sorted(msgs) == [1, 5, 6, 7, 8] and warnings == []


def test_parse_cells_default_unit_and_warning():
    r = parse_cells(["12", "1 oz-in", "2 kg/cm"], "torque", default_unit="mNm")
    assert r.si[0] == pytest.approx(12 * milli, rel=REL)  # scipy.constants milli
    assert r.si[1] == pytest.approx(OZF_IN, rel=REL)  # scipy.constants ounce·g·inch
    assert r.units == ["mNm", "oz-in", "kg/cm"] and r.errors == []
    assert [i for i, _ in r.warnings] == [2]


def test_dimensionless_bare_or_percent():
    r = parse_cells(["85 %", "0.9", 0.5, "85%"], "dimensionless")
    assert np.allclose(r.si, [0.85, 0.9, 0.5, 0.85], rtol=REL) and r.errors == []


def test_convert_column_one_conversion_per_distinct_spelling(monkeypatch):
    calls = []
    real = values_mod.parse_unit

    def counting(spelling, dimension):
        calls.append(spelling)
        return real(spelling, dimension)

    monkeypatch.setattr(values_mod, "parse_unit", counting)
    n = 3000
    spellings = ["rpm", "krpm", " rpm", None, "rad/s", "bogus"]
    units = [spellings[i % len(spellings)] for i in range(n)]
    numbers = np.arange(n, dtype=float)
    si, errors, warnings = convert_column(numbers, units, "angular_speed", default_unit="rpm")
    assert sorted(calls) == ["bogus", "krpm", "rad/s", "rpm", "rpm"]  # None -> default 'rpm'
    assert si[0] == pytest.approx(0.0) and si[1] == pytest.approx(1000 * RPM, rel=REL)  # scipy
    assert len(errors) == n // len(spellings) and warnings == []


def test_parse_unit_is_cached():
    parse_unit.cache_clear()
    parse_unit("mN·m", "torque")
    parse_unit("mN·m", "torque")
    info = parse_unit.cache_info()
    assert info.hits >= 1 and info.misses == 1


_KNOWN = [  # (spelling, dimension, si of 1 unit, offset): references from scipy.constants
    ("oz-in", "torque", OZF_IN, 0.0),  # scipy.constants ounce·g·inch
    ("mNm", "torque", milli, 0.0),  # scipy.constants milli
    ("rpm", "angular_speed", RPM, 0.0),  # scipy.constants pi, minute
    ("V/krpm", "torque_constant", 1 / (1000 * RPM), 0.0),  # scipy.constants pi, minute
    ("°F", "temperature", convert_temperature(1.0, "F", "K") - convert_temperature(0.0, "F", "K"),
     convert_temperature(0.0, "F", "K")),  # scipy.constants convert_temperature
]


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=-1e9, max_value=1e9, allow_nan=False, allow_infinity=False),
       st.sampled_from(_KNOWN))
def test_value_times_spelling_round_trips(value, known):
    spelling, dimension, factor, offset = known
    si = parse_quantity(f"{value!r} {spelling}", dimension)
    assert si == pytest.approx(value * factor + offset, rel=1e-12, abs=1e-300 + abs(offset) * 1e-12)
    back = parse_unit(spelling, dimension).from_si(si)
    assert back == pytest.approx(value, rel=1e-9, abs=1e-6)


@pytest.mark.parametrize("name", list(DIMENSIONS))
@pytest.mark.parametrize("preset", PRESETS)
def test_display_labels_round_trip(name, preset):
    si = np.array([0.5, 2.0, np.nan])
    shown, label = to_display(si, name, preset)
    assert label in DIMENSIONS[name].display[preset]
    conv = parse_unit(label, name)
    assert np.allclose(conv.to_si(shown[:2]), si[:2], rtol=1e-12) and np.isnan(shown[2])
    assert display_unit(name, preset) == DIMENSIONS[name].display[preset][0]


def test_display_values():
    assert to_display(np.array([1.0]), "torque", "datasheet")[0][0] == pytest.approx(1000.0)
    assert to_display(np.array([1.0]), "torque", "imperial") == (pytest.approx([1 / OZF_IN]), "oz·in")
    vals, label = to_display(np.array([300.0]), "temperature", "imperial")
    assert label == "°F" and vals[0] == pytest.approx(convert_temperature(300.0, "K", "F"), rel=REL)  # scipy
    assert to_display(np.array([0.004, 0.02]), "time", "datasheet")[1] == "ms"  # as fits
    assert to_display(np.array([4.0, 0.02]), "time", "datasheet")[1] == "s"
    with pytest.raises(KeyError):
        to_display(np.array([1.0]), "torque", "metric-ish")


def test_parse_quantity_errors_name_the_text():
    with pytest.raises(UnitError, match="no unit given"):
        parse_quantity("12", "torque")
    assert parse_quantity("12", "torque", default_unit="mNm") == pytest.approx(0.012, rel=REL)
    assert math.isclose(parse_quantity(0.25, "dimensionless"), 0.25)


@pytest.mark.parametrize("text", ["0.5 12 rpm", "3 12"])
def test_a_second_number_is_no_unit(text):
    with pytest.raises(UnitError, match="a number where a unit should start"):
        parse_quantity(text, "angular_speed" if "rpm" in text else "dimensionless")
    assert parse_quantity("12 1/min", "angular_speed") == pytest.approx(12 * RPM, rel=REL)  # scipy


# -- a column of text split at once (pyarrow) reads as cell by cell -----------------------------

def _cell_by_cell(monkeypatch):
    """parse_cells with the pyarrow split switched off: every cell read one by one."""
    monkeypatch.setattr(values_mod, "_split_fast", lambda texts, column=None: None)


def _same_parse(a, b):
    # bit for bit: -0.0 and 0.0 differ, NaN equals NaN
    assert np.asarray(a.si, dtype=float).view(np.int64).tolist() == np.asarray(b.si, dtype=float).view(np.int64).tolist()
    assert np.asarray(a.numbers).view(np.int64).tolist() == np.asarray(b.numbers).view(np.int64).tolist()
    assert (a.units, a.errors, a.warnings) == (b.units, b.errors, b.warnings)


_WS_CHARS = "\t\n\x0b\x0c\r\x1c\x1f \x85\xa0\u1680\u2000\u2009\u200a\u2028\u2029\u202f\u205f\u3000"
_CELL_ALPHABET = "0123456789+-.,eE'’−" + _WS_CHARS + "mNkgozinAVWKrpsΩµ°·²/()%^*x\u200b\u180eé٣２"
_CELLS = ["12.5 oz-in", " 12.5 oz-in ", "12.5oz-in", "1e3 mNm", "1.e3 mNm", ".5 N·m", "5. N·m", "+5 V",
          "-0 V", "1e999 mNm", "1e-400 mNm", "1e5.3 V", "12e mNm", "1e+ V", "3 12", "1,5 mNm", "1,500 mNm",
          "1 500 V", "1'200 V", "nan mNm", "inf", "12 V,", "12 mN m", "12\u00a0V", "12\u2009V", "\u3000 12 V",
          "12 V\u2028", "12\nV", "12 furlongs", "2 kg/cm", "12", "", "  ", None, "ten mNm", "−5 V", "0x10 V",
          "1_000 V", "١٢ V", "12 \u200bV", "12 V\u180e", "3 °C", "311 °F", "85 %", "85%", "0.5",
          # a unit with a non-ASCII digit, once behind a number too large (read cell by cell) and once not
          "5e999 mNm٣", "1 mNm٣", "2 ２mNm"]


@pytest.mark.parametrize("dimension, default", [("torque", None), ("voltage", "V"), ("temperature", "°C"),
                                                ("dimensionless", None), ("count", None), ("torque", "bogus")])
def test_parse_cells_at_once_as_cell_by_cell_known_cells(monkeypatch, dimension, default):
    at_once = parse_cells(_CELLS, dimension, default_unit=default)
    _cell_by_cell(monkeypatch)
    _same_parse(at_once, parse_cells(_CELLS, dimension, default_unit=default))


@settings(max_examples=150, deadline=None)
@given(st.lists(st.one_of(st.none(), st.text(alphabet=_CELL_ALPHABET, max_size=12),
                          st.builds(lambda x, sp, u: f"{x!r}{sp}{u}",
                                    st.floats(allow_nan=False, allow_infinity=False),
                                    st.sampled_from(["", " ", "  ", "\t", "\u00a0"]),
                                    st.sampled_from(["", "mNm", "oz-in", "N·m", "mN m", "kg/cm", "V", "%",
                                                     "°C", "furlong", "e5", "E+2 V"]))), max_size=40),
       st.sampled_from([("torque", None), ("voltage", "V"), ("temperature", "degC"), ("dimensionless", None)]))
def test_parse_cells_at_once_as_cell_by_cell(cells, dim_default):
    dimension, default = dim_default
    at_once = parse_cells(cells, dimension, default_unit=default)
    real = values_mod._split_fast
    values_mod._split_fast = lambda texts, column=None: None
    try:
        one_by_one = parse_cells(cells, dimension, default_unit=default)
    finally:
        values_mod._split_fast = real
    _same_parse(at_once, one_by_one)


def test_parse_cells_takes_a_pyarrow_column():
    import pyarrow as pa

    cells = ["1 mNm", None, "2 oz-in", "x"]
    _same_parse(parse_cells(cells, "torque", column=pa.array(cells, type=pa.string())),
                parse_cells(cells, "torque"))


def test_whitespace_is_python_whitespace():
    import sys

    import pyarrow as pa
    import pyarrow.compute as pc

    python = {chr(c) for c in range(sys.maxunicode + 1) if chr(c).isspace()}
    assert set(values_mod.WHITESPACE) == python and len(values_mod.WHITESPACE) == len(python)
    every = pa.array([chr(c) for c in range(sys.maxunicode + 1) if not 0xD800 <= c < 0xE000])
    hits = pc.match_substring_regex(every, f"^[{values_mod.WHITESPACE_RE2}]$").to_pylist()
    assert {c for c, hit in zip(every.to_pylist(), hits) if hit} == python
