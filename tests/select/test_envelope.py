"""Bad envelopes: one exact line per mistake, naming the key path (schemas/envelope.schema.json)."""
from __future__ import annotations

from pathlib import Path

import pytest

from catalog.errors import InputError
from catalog.select import load_envelope

QUERIES = Path(__file__).resolve().parents[2] / "queries"

HEAD = """
name = "x"
[supply]
nominal_voltage = "24 V"
"""
SEGMENTS = """
[cycle]
[[cycle.segments]]
name = "a"
duration = "1 s"
torque = "1 N*m"
speed_start = "10 rpm"
[[cycle.segments]]
name = "b"
duration = "2 s"
torque = "1 N*m"
speed_start = "10 rpm"
[[cycle.segments]]
name = "c"
duration = "{duration}"
torque = "1 N*m"
speed_start = "10 rpm"
"""


def problems(path):
    with pytest.raises(InputError) as info:
        load_envelope(path, source="x.toml")
    return [str(p) for p in info.value.problems]


@pytest.mark.parametrize("text, expected", [
    (HEAD + SEGMENTS.format(duration="-1 s"),
     "x.toml:cycle.segments[2].duration: '-1 s' is negative, expected a positive time"),
    (HEAD + SEGMENTS.format(duration="1 N*m"),
     "x.toml:cycle.segments[2].duration: '1 N*m' is a torque, expected a time"),
    (HEAD + SEGMENTS.format(duration="1 s") + '[environment]\nambiant_temperature = "20 degC"\n',
     "x.toml:environment.ambiant_temperature: unknown key, expected one of ambient_temperature, "
     "housing_cooling_factor"),
    (HEAD + "[cycle]\nsegments = []\n", "x.toml:cycle.segments: empty, expected at least one segment"),
    (HEAD.replace('"24 V"', '"24 V"\nmin_voltage = "26 V"') + SEGMENTS.format(duration="1 s"),
     "x.toml:supply.min_voltage: '26 V' is above supply.nominal_voltage '24 V', expected at most the "
     "nominal voltage"),
    (HEAD.replace('"24 V"', '"24 V"\ndrive_continuous_current = "5 A"\ndrive_peak_current = "3 A"')
     + SEGMENTS.format(duration="1 s"),
     "x.toml:supply.drive_peak_current: '3 A' is below supply.drive_continuous_current '5 A', "
     "expected at least the continuous current"),
    (HEAD, "x.toml:points/cycle: found neither [[points]], [cycle] nor [[motion.moves]], expected exactly one "
           "form of load"),
    (HEAD + SEGMENTS.format(duration="1 s") + '[ranking]\nkeys = ["weight"]\n',
     "x.toml:ranking.keys[0]: 'weight' is not a ranking key, expected one of mass, price, length, "
     "diameter, winding_temperature, energy_per_cycle, rms_current, smallest_margin, ratio "
     "(optionally with a leading '-')"),
])
def test_bad_envelope_messages(envelope_file, text, expected):
    assert problems(envelope_file(text)) == [expected]


def test_example_envelopes_are_valid():
    names = sorted(p.stem for p in QUERIES.glob("*.toml"))
    assert names == ["camera_pan", "drive_wheel", "impossible", "lift_axis", "screw_stage", "water_pump"]
    for path in QUERIES.glob("*.toml"):
        env = load_envelope(path)
        assert env.name == path.stem


def test_reversal_is_split_at_zero_speed():
    # camera_pan 'reverse': 60 rpm -> -60 rpm in 0.4 s is evaluated as two 0.2 s halves.
    env = load_envelope(QUERIES / "camera_pan.toml")
    halves = [i for i, n in enumerate(env.names) if n == "reverse"]
    assert len(halves) == 2
    assert env.duration[halves].tolist() == pytest.approx([0.2, 0.2])
    assert env.speed_end[halves[0]] == 0.0 and env.speed_start[halves[1]] == 0.0


def test_dict_envelope_and_units():
    env = load_envelope({"name": "d", "supply": {"nominal_voltage": "24 V", "min_voltage": "21 V",
                                                 "drive_voltage_drop": "1 V"},
                         "environment": {"ambient_temperature": "40 degC"},
                         "points": [{"name": "p", "torque": "0.8 N*m", "speed": "45 rpm",
                                     "kind": "continuous"}]})
    assert env.available_voltage == pytest.approx(20.0)
    assert env.ambient_temperature == pytest.approx(313.15)
    assert env.speed_start[0] == pytest.approx(45 * 3.141592653589793 / 30)
