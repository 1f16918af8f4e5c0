"""Mechanisms and moves: envelopes written as the machine is described, turned into gear-output segments.

Every kind is checked against a hand-worked example (the arithmetic is in the
comments, g = 9.80665 m/s² exactly, CGPM 1901 / NIST SP 811) and against a
forward simulation (scipy.integrate.solve_ivp) of the motor's rotor, the gear
and the mechanism with its mass, driven by the motor torque the selection
derives from the generated segments: the simulated load must make exactly the
requested moves.

Sources of the relations: Budynas & Nisbett, Shigley's Mechanical Engineering
Design, ch. 8 (power screws: lead, torque and efficiency raising and lowering
a load); Meriam & Kraige, Engineering Mechanics: Dynamics, ch. 2 (constant
acceleration), ch. 3 (inclined plane with Coulomb friction), ch. 6 (rotation
about a fixed axis, kinetic energy of connected bodies); Gillespie,
Fundamentals of Vehicle Dynamics, ch. 4 (rolling resistance and grade).
"""
from __future__ import annotations

import copy
import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
from scipy import constants, integrate

from catalog.errors import InputError
from catalog.select import load_envelope
from catalog.select.envelope import SCHEMA_PATH, envelope_schema
from catalog.select.motion import gear_output_cycle, mechanism_kinds

QUERIES = Path(__file__).resolve().parents[2] / "queries"
G = constants.g                     # 9.80665 m/s², standard gravity (scipy.constants, CODATA/CGPM)
REL = 1e-5                          # hand numbers below are written to 6 significant digits


def envelope(mechanism: dict, moves: list | None = None, segments: list | None = None) -> dict:
    out = {"name": "m", "supply": {"nominal_voltage": "24 V"}, "load": {"mechanism": mechanism}}
    if moves is not None:
        out["motion"] = {"moves": moves}
    if segments is not None:
        out["cycle"] = {"segments": segments}
    return out


SCREW = envelope(
    {"kind": "screw", "lead": "10 mm", "mass": "10 kg", "efficiency": 0.9, "back_efficiency": 0.8,
     "angle": "30 deg", "friction": 0.1, "force": "20 N", "inertia": "0.1 kg*cm^2"},
    [{"name": "out", "distance": "120 mm", "time": "0.6 s", "dwell": "1 s"},
     {"name": "back", "distance": "-120 mm", "time": "0.6 s"}])
BELT = envelope(
    {"kind": "belt", "radius": "20 mm", "mass": "5 kg", "efficiency": 0.95, "friction": 0.02,
     "inertia": "2 kg*cm^2"},
    [{"name": "shift", "distance": "0.5 m", "time": "1 s", "accel_fraction": 0.25}])
RACK = envelope(
    {"kind": "rack_pinion", "radius": "15 mm", "mass": "20 kg", "efficiency": 0.9, "friction": 0.1,
     "force": "50 N"},
    [{"name": "feed", "speed": "200 mm/s", "time": "2 s", "accel_fraction": "10 %"}])
DRUM = envelope(
    {"kind": "drum", "radius": "25 mm", "mass": "10 kg", "efficiency": 0.85, "back_efficiency": 0.75,
     "inertia": "5 kg*cm^2"},
    [{"name": "raise", "distance": "1 m", "time": "2 s", "accel_fraction": 0.25},
     {"name": "lower", "distance": "-1 m", "time": "2 s", "accel_fraction": 0.25}])
WHEEL = envelope(
    {"kind": "wheel", "radius": "100 mm", "mass": "25 kg", "wheels": 4, "efficiency": 0.9, "angle": "15 deg",
     "rolling_resistance": 0.02, "inertia": "20 kg*cm^2"},
    [{"name": "climb", "distance": "2 m", "time": "2 s", "accel_fraction": 0.25}])
ROTARY = envelope(
    {"kind": "rotary", "inertia": "0.05 kg*m^2", "friction_torque": "0.2 N*m", "torque": "0.5 N*m"},
    [{"name": "cw", "distance": "90 deg", "time": "0.5 s", "accel_fraction": 0.5, "dwell": "0.3 s"},
     {"name": "ccw", "distance": "-90 deg", "time": "0.5 s", "accel_fraction": 0.5}])


def torques(env) -> dict:
    return dict(zip(env.names, env.torque))


# -- hand-worked examples ------------------------------------------------------------------------


def test_screw_by_hand():
    env = load_envelope(SCREW)
    # r = l/(2π) = 0.01/(2π) = 1.59155e-3 m (Shigley ch. 8: one lead per revolution)
    # move 'out': 120 mm in 0.6 s, accel fraction 1/3 -> ramps of 0.2 s, v = 0.12/(0.6·2/3) = 0.3 m/s,
    #   a = 0.3/0.2 = 1.5 m/s², screw speed 0.3/r = 188.496 rad/s, α = 1.5/r = 942.478 rad/s²
    # m·g·sin 30° = 10·9.80665·0.5 = 49.0333 N; μ·m·g·cos 30° = 0.1·98.0665·0.866025 = 8.49281 N;
    # m·a = 15 N; F_ext = 20 N; J·α = 1e-5·942.478 = 9.42478e-3 N·m
    # accel:  F = 49.0333 + 8.49281 + 15 + 20 = 92.5261 N, T = 92.5261·r/0.9 + 9.42478e-3 = 0.173047 N·m
    # run:    F = 77.5261 N, T = 77.5261·r/0.9 = 0.137096 N·m
    # decel:  F = 62.5261 N (still drives), T = 62.5261·r/0.9 − 9.42478e-3 = 0.101146 N·m
    # dwell:  F = 49.0333 + 20 = 69.0333 N (no friction at rest), held with the driving efficiency:
    #         T = 69.0333·r/0.9 = 0.122078 N·m
    # 'back' (v < 0, friction helps): accel a = −1.5: F = 49.0333 − 8.49281 − 15 + 20 = 45.5404 N,
    #   F·v < 0: the load drives, T = 45.5404·r·0.8 − 9.42478e-3 = 0.0485591 N·m
    # run: F = 60.5404 N, T = 60.5404·r·0.8 = 0.0770825 N·m; decel: F = 75.5404 N, T = 0.105606 N·m
    assert env.names == ["out accel", "out run", "out decel", "out dwell", "back accel", "back run",
                         "back decel"]
    assert env.torque == pytest.approx([0.173047, 0.137096, 0.101146, 0.122078, 0.0485591, 0.0770825,
                                        0.105606], rel=REL)
    assert env.duration == pytest.approx([0.2, 0.2, 0.2, 1.0, 0.2, 0.2, 0.2], rel=1e-12)
    assert max(env.speed_start.max(), env.speed_end.max()) == pytest.approx(188.496, rel=REL)
    assert env.speed_end[4] == pytest.approx(-188.496, rel=REL)
    # reflected inertia m·r² + J = 10·(1.59155e-3)² + 1e-5 = 3.53303e-5 kg·m² (energy equivalence)
    assert env.reflected_inertia == pytest.approx(3.53303e-5, rel=REL)
    assert env.load_inertia == 0.0   # already in the torques: the selection must not add it again


def test_belt_by_hand():
    env = load_envelope(BELT)
    # 0.5 m in 1 s, accel fraction 0.25: ramps 0.25 s, v = 0.5/0.75 = 0.666667 m/s, a = 2.66667 m/s²,
    # pulley 0.666667/0.02 = 33.3333 rad/s, α = 133.333 rad/s²; μ·m·g = 0.02·5·9.80665 = 0.980665 N
    # accel: F = 0.980665 + 5·2.66667 = 14.3140 N, T = 14.3140·0.02/0.95 + 2e-4·133.333 = 0.328014 N·m
    # run:   T = 0.980665·0.02/0.95 = 0.0206456 N·m
    # decel: F = 0.980665 − 13.3333 = −12.3527 N against v > 0: the load drives, back efficiency =
    #        efficiency (default): T = −12.3527·0.02·0.95 − 2e-4·133.333 = −0.261367 N·m
    assert list(torques(env).values()) == pytest.approx([0.328014, 0.0206456, -0.261367], rel=REL)
    assert env.speed_end[0] == pytest.approx(33.3333, rel=REL)
    assert env.reflected_inertia == pytest.approx(5 * 0.02**2 + 2e-4, rel=1e-12)   # 2.2e-3 kg·m²


def test_rack_and_pinion_run_by_hand():
    env = load_envelope(RACK)
    # run at 0.2 m/s for 2 s with 10 % ramps: 0.2 s up, 1.6 s steady, 0.2 s down, a = 1 m/s²
    # (distance 0.2·2·0.9 = 0.36 m); μ·m·g = 0.1·20·9.80665 = 19.6133 N, F_ext = 50 N
    # accel: F = 19.6133 + 50 + 20 = 89.6133 N, T = 89.6133·0.015/0.9 = 1.49356 N·m
    # run: 69.6133 N -> 1.16022 N·m; decel: 49.6133 N -> 0.826888 N·m; pinion 0.2/0.015 = 13.3333 rad/s
    assert env.names == ["feed accel", "feed run", "feed decel"]
    assert env.torque == pytest.approx([1.49356, 1.16022, 0.826888], rel=REL)
    assert env.duration == pytest.approx([0.2, 1.6, 0.2], rel=1e-12)
    assert env.speed_start[1] == pytest.approx(13.3333, rel=REL)


def test_drum_by_hand():
    env = load_envelope(DRUM)
    # 1 m in 2 s, ramps 0.5 s: v = 1/1.5 = 0.666667 m/s, a = 1.33333 m/s², α = a/0.025 = 53.3333 rad/s²,
    # J·α = 5e-4·53.3333 = 0.0266667 N·m; cable force m·(g + a), positive travel raises
    # raise accel: F = 10·(9.80665 + 1.33333) = 111.400 N, T = 111.400·0.025/0.85 + 0.0266667 = 3.30313
    # raise run:   F = 98.0665 N, T = 98.0665·0.025/0.85 = 2.88431
    # raise decel: F = 84.7332 N, T = 84.7332·0.025/0.85 − 0.0266667 = 2.46549
    # lower (v < 0, the weight drives): accel a = −1.33333: F = 84.7332 N, T = 84.7332·0.025·0.75 − 0.0266667
    #   = 1.56208; run: 98.0665·0.025·0.75 = 1.83875; decel: 111.400·0.025·0.75 + 0.0266667 = 2.11541
    assert env.torque == pytest.approx([3.30313, 2.88431, 2.46549, 1.56208, 1.83875, 2.11541], rel=REL)
    assert env.reflected_inertia == pytest.approx(10 * 0.025**2 + 5e-4, rel=1e-12)   # 6.75e-3 kg·m²


def test_wheel_by_hand():
    env = load_envelope(WHEEL)
    # 2 m in 2 s, ramps 0.5 s: v = 2/1.5 = 1.33333 m/s, a = 2.66667 m/s², wheel α = 26.6667 rad/s²
    # grade m·g·sin 15° = 25·9.80665·0.258819 = 63.4537 N; rolling 0.02·245.166·0.965926 = 4.73625 N;
    # m·a = 66.6667 N; four driven wheels share it
    # accel: F = (63.4537 + 4.73625 + 66.6667)/4 = 33.7142 N per wheel,
    #        T = 33.7142·0.1/0.9 + 0.002·26.6667 = 3.79935 N·m
    # run:   F = 17.0475 N, T = 1.89417 N·m
    # decel: F = 0.380819 N (still drives), T = 0.380819·0.1/0.9 − 0.0533333 = −0.0110201 N·m
    assert env.torque == pytest.approx([3.79935, 1.89417, -0.0110201], rel=REL)
    # per wheel: (m/4)·r² + J_wheel = 6.25·0.01 + 0.002 = 0.0645 kg·m²
    assert env.reflected_inertia == pytest.approx(0.0645, rel=1e-12)


def test_rotary_by_hand():
    env = load_envelope(ROTARY)
    # 90° in 0.5 s as a triangle: ω_peak = (π/2)/(0.5·0.5) = 2π rad/s, α = 2π/0.25 = 25.1327 rad/s²
    # J·α = 0.05·25.1327 = 1.25664 N·m; friction 0.2 N·m opposes motion; unbalance 0.5 N·m opposes +
    # cw accel 1.25664 + 0.2 + 0.5 = 1.95664; decel −1.25664 + 0.7 = −0.556637; dwell 0.5 (no friction)
    # ccw accel −1.25664 − 0.2 + 0.5 = −0.956637; decel 1.25664 + 0.3 = 1.55664
    assert env.names == ["cw accel", "cw decel", "cw dwell", "ccw accel", "ccw decel"]
    assert env.torque == pytest.approx([1.95664, -0.556637, 0.5, -0.956637, 1.55664], rel=REL)
    assert env.speed_end[0] == pytest.approx(2 * math.pi, rel=1e-12)
    assert env.reflected_inertia == 0.05


def test_self_locking_screw_drives_the_load_down():
    # A lead screw of 30 % efficiency is self-locking: back efficiency 2 − 1/0.3 = −1.33 (Shigley ch. 8:
    # η = tan λ/tan(λ + ρ) raising, tan(λ − ρ)/tan λ lowering; for small lead and friction angles λ, ρ
    # these are λ/(λ + ρ) and 1 − ρ/λ = 2 − 1/η). Lowering 5 kg
    # vertically at constant speed: F = 5·9.80665 = 49.0333 N against v < 0, T = F·r·η_back
    # = 49.0333·6.36620e-4·(−1.33333) = −0.0416207 N·m: the motor pushes in the direction of the motion.
    env = load_envelope(envelope({"kind": "screw", "lead": "4 mm", "mass": "5 kg", "efficiency": 0.3,
                                  "back_efficiency": 2 - 1 / 0.3, "angle": "90 deg"},
                                 [{"name": "down", "speed": "-10 mm/s", "time": "1 s"}]))
    assert env.torque == pytest.approx([-0.0416207], rel=REL)
    assert env.torque[0] * env.speed_start[0] > 0          # motor power positive: it drives


# -- moves become trapezoids and triangles ------------------------------------------------------


def distance_covered(env, radius=1.0):
    """∫ v dt over the segments (scipy.integrate.quad on the piecewise-linear speed), at the load."""
    edges = np.concatenate([[0.0], np.cumsum(env.duration)])

    def speed(t):
        k = min(np.searchsorted(edges, t, side="right") - 1, len(env.duration) - 1)
        f = (t - edges[k]) / env.duration[k]
        return (env.speed_start[k] + f * (env.speed_end[k] - env.speed_start[k])) * radius

    return [integrate.quad(speed, edges[k], edges[k + 1])[0] for k in range(len(env.duration))]


@pytest.mark.parametrize("fraction, phases", [(None, ["accel", "run", "decel"]), (0.25, ["accel", "run", "decel"]),
                                              (0.5, ["accel", "decel"]), ("50 %", ["accel", "decel"])])
def test_move_profiles_cover_the_distance(fraction, phases):
    move = {"name": "m", "distance": "-275 mm", "time": "1.1 s", "dwell": "0.4 s"}
    if fraction is not None:
        move["accel_fraction"] = fraction
    env = load_envelope(envelope({"kind": "belt", "radius": "30 mm", "mass": "1 kg", "efficiency": 1}, [move]))
    f = {None: 1 / 3, "50 %": 0.5}.get(fraction, fraction)
    assert env.names == [f"m {p}" for p in phases] + ["m dwell"]
    # ramps of f·T each, the top speed D/(T·(1 − f)) (Meriam & Kraige ch. 2: constant acceleration)
    assert env.duration[0] == pytest.approx(f * 1.1, rel=1e-12)
    assert env.duration.sum() == pytest.approx(1.5, rel=1e-12)
    assert env.speed_end[0] * 0.03 == pytest.approx(-0.275 / (1.1 * (1 - f)), rel=1e-12)
    assert np.all(env.speed_start[1:] == env.speed_end[:-1])       # continuous: from rest to rest
    covered = distance_covered(env, 0.03)
    assert sum(covered) == pytest.approx(-0.275, rel=1e-9)
    assert covered[-1] == 0.0                                        # the dwell stands still


def test_runs_hold_their_speed_and_ramps_take_part_of_the_time():
    mech = {"kind": "belt", "radius": "50 mm", "mass": "2 kg", "efficiency": 0.9}
    plain = load_envelope(envelope(mech, [{"name": "convey", "speed": "0.5 m/s", "time": "20 s", "dwell": "2 s"}]))
    assert plain.names == ["convey run", "convey dwell"]
    assert plain.speed_start[0] == plain.speed_end[0] == pytest.approx(10.0)   # 0.5 m/s / 0.05 m
    assert sum(distance_covered(plain, 0.05)) == pytest.approx(10.0, rel=1e-12)
    ramped = load_envelope(envelope(mech, [{"name": "convey", "speed": "0.5 m/s", "time": "20 s",
                                            "accel_fraction": 0.05}]))
    assert ramped.duration == pytest.approx([1.0, 18.0, 1.0])
    assert sum(distance_covered(ramped, 0.05)) == pytest.approx(0.5 * 20 * 0.95, rel=1e-9)


def test_segment_sources_and_the_gear_output_cycle():
    env = load_envelope(SCREW)
    assert [(s.key, s.phase, s.mechanism) for s in env.segment_source[:4]] == [
        ("motion.moves[0]", p, "screw") for p in ("accel", "run", "decel", "dwell")]
    assert str(env.segment_source[4]) == "move 'back' (motion.moves[1]), accel, through the screw"
    cyc = gear_output_cycle(env).to_dict()
    assert list(cyc) == ["inertia", "segments"]
    assert cyc["inertia"] == env.reflected_inertia
    assert [list(s) for s in cyc["segments"]] == [["name", "duration", "torque", "speed_start", "speed_end"]] * 7
    assert [s["torque"] for s in cyc["segments"]] == list(env.torque)
    # without a mechanism: load.inertia times the ramp's acceleration is added (as the selection does)
    pan = gear_output_cycle(load_envelope(QUERIES / "camera_pan.toml"))
    # sweep right: 0.05 N·m + 0.01 kg·m² · (2π rad/s)/0.2 s = 0.05 + 0.314159 = 0.364159 N·m
    assert pan.torque[0] == pytest.approx(0.364159, rel=REL)
    assert pan.inertia == 0.01
    assert [s.key for s in pan.sources[2:4]] == ["cycle.segments[2]"] * 2    # split at zero speed


def test_written_segments_at_a_mechanism():
    # A screw stage pressing: segments written at the mechanism in force and linear speed.
    segments = [{"name": "approach", "duration": "0.5 s", "speed_start": "0 mm/s", "speed_end": "100 mm/s"},
                {"name": "press", "duration": "2 s", "force": "200 N", "speed_start": "5 mm/s"},
                {"name": "swing", "duration": "1 s", "speed_start": "100 mm/s", "speed_end": "-100 mm/s"}]
    env = load_envelope(envelope({"kind": "screw", "lead": "5 mm", "mass": "4 kg", "efficiency": 0.9},
                                 segments=segments))
    r = 0.005 / (2 * math.pi)                                       # 7.95775e-4 m
    # approach: a = 0.1/0.5 = 0.2 m/s², F = 4·0.2 = 0.8 N, T = 0.8·r/0.9 = 7.07355e-4 N·m, ω 0 -> 0.1/r = 125.664
    # press: F = 200 N, T = 200·r/0.9 = 0.176839 N·m at 5 mm/s = 6.28319 rad/s
    # swing: a = −0.2 m/s², F = −0.8 N: against v > 0 the load drives (η_back = η): T = −0.8·r·0.9
    #        = −5.72958e-4 N·m; after the reversal (v < 0, F < 0) the mechanism drives: −0.8·r/0.9
    assert env.names == ["approach", "press", "swing", "swing"]
    assert env.torque == pytest.approx([7.07355e-4, 0.176839, -5.72958e-4, -7.07355e-4], rel=REL)
    assert env.speed_end[0] == pytest.approx(125.664, rel=REL)
    assert env.speed_start[1] == pytest.approx(0.005 / r, rel=1e-12)
    assert env.duration[2:] == pytest.approx([0.5, 0.5])
    assert [s.key for s in env.segment_source] == [f"cycle.segments[{i}]" for i in (0, 1, 2, 2)]


def test_demo_screw_stage_closes_its_cycle():
    env = load_envelope(QUERIES / "screw_stage.toml")
    r = 0.01 / (2 * math.pi)
    assert sum(distance_covered(env, r)) == pytest.approx(0.0, abs=1e-9)      # 200 + 95 − 295 mm
    assert env.mechanism.kind == "screw" and env.repeat


# -- the schema: the names are a contract -------------------------------------------------------

CONTRACT = {   # kind: (required, optional) -- scripts rely on these names
    "screw": ({"lead", "mass", "efficiency"}, {"angle", "friction", "force", "back_efficiency", "inertia"}),
    "belt": ({"radius", "mass", "efficiency"}, {"angle", "friction", "force", "back_efficiency", "inertia"}),
    "rack_pinion": ({"radius", "mass", "efficiency"}, {"angle", "friction", "force", "back_efficiency", "inertia"}),
    "drum": ({"radius", "mass", "efficiency"}, {"back_efficiency", "inertia"}),
    "wheel": ({"radius", "mass", "efficiency"},
              {"wheels", "angle", "rolling_resistance", "back_efficiency", "inertia"}),
    "rotary": ({"inertia"}, {"friction_torque", "torque"}),
}


def test_mechanism_keys_are_the_contract():
    schema = envelope_schema()
    kinds = mechanism_kinds(schema)
    assert schema["properties"]["load"]["properties"]["mechanism"]["properties"]["kind"]["enum"] == list(kinds)
    assert set(kinds) == set(CONTRACT)
    for kind, (required, optional) in CONTRACT.items():
        definition = kinds[kind]
        assert set(definition["required"]) == required | {"kind"}, kind
        assert optional <= set(definition["properties"]), kind     # more optional keys may come
    move = schema["properties"]["motion"]["properties"]["moves"]["items"]
    assert set(move["properties"]) == {"name", "distance", "speed", "time", "accel_fraction", "dwell"}


def test_the_schema_file_alone_checks_each_kind():
    """Other JSON-Schema tools (editors) see the per-kind keys through the file's if/then."""
    from jsonschema import Draft202012Validator

    raw = json.loads(SCHEMA_PATH.read_text(encoding="utf-8"))
    validator = Draft202012Validator(raw)
    good = copy.deepcopy(SCREW)
    assert not list(validator.iter_errors(good))
    for kind, (required, _) in CONTRACT.items():
        bad = copy.deepcopy(good)
        bad["load"]["mechanism"] = {"kind": kind}
        missing = {e.message.split("'")[1] for e in validator.iter_errors(bad) if e.validator == "required"}
        assert missing == required, kind


@pytest.mark.parametrize("mechanism, moves, expected", [
    ({"kind": "rotary", "inertia": "0.1 kg*m^2"}, [{"name": "a", "distance": "0.2 m", "time": "1 s"}],
     "e.toml:motion.moves[0].distance: '0.2 m' is a length, expected an angle"),
    ({"kind": "belt", "radius": "20 mm", "mass": "1 kg", "efficiency": 0.9},
     [{"name": "a", "distance": "0.2 m", "time": "1 s", "accel_fraction": 0.6}],
     "e.toml:motion.moves[0].accel_fraction: 0.6 is out of range, expected at most 0.5"),
    ({"kind": "wheel", "radius": "20 mm", "mass": "1 kg", "efficiency": 0.9, "wheels": 0},
     [{"name": "a", "distance": "0.2 m", "time": "1 s"}],
     "e.toml:load.mechanism.wheels: 0 is out of range, expected at least 1"),
    ({"kind": "drum", "radius": "20 mm", "efficiency": 0.9}, [{"name": "a", "distance": "0.2 m", "time": "1 s"}],
     "e.toml:load.mechanism.mass: missing, this key is required"),
])
def test_mechanism_mistakes_are_one_line_each(mechanism, moves, expected):
    with pytest.raises(InputError) as info:
        load_envelope(envelope(mechanism, moves), source="e.toml")
    assert [str(p) for p in info.value.problems] == [expected]


# -- simulation: the generated torques make the requested motion ---------------------------------


@dataclass
class Plant:
    """The mechanism in forward form: m·a = F_drive − resistance(direction) at the load."""

    mass: float          # kg (a rotary load: its inertia)
    radius: float        # m per rad (1 for a rotary load)
    efficiency: float
    back_efficiency: float
    inertia: float       # the mechanism's own, at its input
    resistance: object   # direction -> force (torque) against the motion, gravity and external loads


def plant(kind):
    sin, cos = math.sin, math.cos
    if kind == "screw":
        th = math.radians(30)
        return Plant(10.0, 0.01 / (2 * math.pi), 0.9, 0.8, 1e-5,
                     lambda d: 10 * G * sin(th) + 0.1 * 10 * G * cos(th) * d + 20.0)
    if kind == "belt":
        return Plant(5.0, 0.02, 0.95, 0.95, 2e-4, lambda d: 0.02 * 5 * G * d)
    if kind == "rack_pinion":
        return Plant(20.0, 0.015, 0.9, 0.9, 0.0, lambda d: 0.1 * 20 * G * d + 50.0)
    if kind == "drum":
        return Plant(10.0, 0.025, 0.85, 0.75, 5e-4, lambda d: 10 * G)
    if kind == "wheel":   # one wheel carries a quarter of the vehicle
        th = math.radians(15)
        return Plant(25.0 / 4, 0.1, 0.9, 0.9, 0.002, lambda d: (25 * G * sin(th) + 0.02 * 25 * G * cos(th) * d) / 4)
    return Plant(0.05, 1.0, 1.0, 1.0, 0.0, lambda d: 0.2 * d + 0.5)


RATIO, GEAR_EFF, ROTOR, GEAR_J = 8.0, 0.8, 1.2e-5, 3e-6


def forward(p: Plant, motor_torque: float, v: float):
    """(acceleration at the load, gear output torque) for a motor torque, speed v.

    Rotor and gear input: (J_rotor + J_gear)·n·α = T_m − T_in; gear: T_out = n·η_g·T_in where power flows
    to the load (T_out·v ≥ 0), n·T_in/η_g where it flows back; mechanism input: J·α = T_out − T_mech;
    mechanism: F = η·T_mech/r driving, T_mech/(r·η_back) back-driven; load: m·a = F − resistance.
    Every branch is tried and the one whose power flows agree with it is taken; at rest the load
    moves only where the torque overcomes the load's resistance, else it stays.
    """
    jr = ROTOR + GEAR_J
    directions = [math.copysign(1.0, v)] if abs(v) > 1e-12 else [1.0, -1.0]
    for d in directions:
        for gear_drives in (True, False):
            gn = RATIO * GEAR_EFF if gear_drives else RATIO / GEAR_EFF
            for mech_drives in (True, False):
                k = p.efficiency / p.radius if mech_drives else 1.0 / (p.radius * p.back_efficiency)
                a = (k * gn * motor_torque - p.resistance(d)) / (
                    p.mass + k * (gn * jr * RATIO + p.inertia) / p.radius)
                t_out = gn * (motor_torque - jr * RATIO * a / p.radius)
                force = k * (t_out - p.inertia * a / p.radius)
                if (t_out * d >= 0) != gear_drives or (force * d >= 0) != mech_drives:
                    continue
                if abs(v) <= 1e-12 and a * d <= 1e-9:
                    continue
                return a, t_out
    assert abs(v) <= 1e-12, "no consistent power flow while moving"
    return 0.0, math.nan


@pytest.mark.parametrize("kind, example", [("screw", SCREW), ("belt", BELT), ("rack_pinion", RACK),
                                           ("drum", DRUM), ("wheel", WHEEL), ("rotary", ROTARY)])
def test_simulated_motion_follows_the_moves(kind, example):
    from catalog.physics import required_motor_torque

    env = load_envelope(example)
    p = plant(kind)
    w_mid = (env.speed_start + env.speed_end) / 2
    alpha = (env.speed_end - env.speed_start) / env.duration
    # the motor torque the selection derives from the gear-output segments (catalog.physics.gearing)
    motor = required_motor_torque(env.torque, w_mid, alpha, RATIO, GEAR_EFF, ROTOR, GEAR_J, 0.0)
    y = np.zeros(2)                                   # position [m or rad], speed at the load
    wanted_x = 0.0
    vmax = float(np.max(np.abs(env.speed_start))) * p.radius or 1.0
    for k in range(len(env.names)):
        sol = integrate.solve_ivp(lambda t, s, tm=motor[k]: [s[1], forward(p, tm, s[1])[0]],
                                  (0.0, env.duration[k]), y, method="DOP853", rtol=1e-11, atol=1e-13)
        assert sol.success
        y = sol.y[:, -1].copy()
        if abs(y[1]) < 1e-9 * vmax:
            y[1] = 0.0
        wanted_x += (env.speed_start[k] + env.speed_end[k]) / 2 * env.duration[k] * p.radius
        assert y[1] == pytest.approx(env.speed_end[k] * p.radius, abs=1e-7 * vmax), env.names[k]
        assert y[0] == pytest.approx(wanted_x, abs=1e-7 * vmax), env.names[k]
        # the torque at the gear output in the simulation is the segment's
        v_mid = (env.speed_start[k] + env.speed_end[k]) / 2 * p.radius
        if v_mid != 0.0:
            assert forward(p, motor[k], v_mid)[1] == pytest.approx(env.torque[k], rel=1e-9), env.names[k]
    # every move ends where it was asked to: the sum of the requested distances
    requested = {"screw": 0.0, "belt": 0.5, "rack_pinion": 0.36, "drum": 0.0, "wheel": 2.0, "rotary": 0.0}
    assert y[0] == pytest.approx(requested[kind], abs=1e-7 * max(vmax, 1.0))


def test_simulated_hold_stays_put():
    """A dwell's holding torque (driving efficiency) neither lifts nor drops the screw's load."""
    env = load_envelope(SCREW)
    k = env.names.index("out dwell")
    from catalog.physics import required_motor_torque

    tm = required_motor_torque(env.torque[k], 0.0, 0.0, RATIO, GEAR_EFF, ROTOR, GEAR_J, 0.0)
    assert forward(plant("screw"), tm, 0.0)[0] == 0.0
    # 1 % less torque than the model holds with still holds (friction in the screw and gear) ...
    assert forward(plant("screw"), 0.99 * tm, 0.0)[0] == 0.0
    # ... and well below the back-driving threshold the load runs down
    assert forward(plant("screw"), 0.3 * tm, 0.0)[0] < 0.0
