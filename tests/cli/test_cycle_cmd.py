"""`motorshelf cycle ENVELOPE`: the duty cycle at the gear output, as a table and as SI JSON."""
from __future__ import annotations

import json
import math
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from catalog.cli import cli

ROOT = Path(__file__).resolve().parents[2]
STAGE = ROOT / "queries" / "screw_stage.toml"


def run(*args):
    return CliRunner().invoke(cli, list(map(str, args)), catch_exceptions=False)


def test_json_is_si_with_exactly_the_documented_keys(tmp_path):
    r = run("--db", tmp_path / "none.duckdb", "cycle", STAGE, "--format", "json")
    assert r.exit_code == 0, r.output
    out = json.loads(r.output)
    assert list(out) == ["inertia", "segments"]
    assert [s["name"] for s in out["segments"]] == [
        "extend accel", "extend run", "extend decel", "extend dwell", "scan accel", "scan run", "scan decel",
        "scan dwell", "return accel", "return decel", "return dwell"]
    for s in out["segments"]:
        assert list(s) == ["name", "duration", "torque", "speed_start", "speed_end"]
    first = out["segments"][0]
    # screw r = 0.01/(2π) = 1.59155e-3 m; 200 mm in 0.8 s, ramps 0.8/3 s: v = 0.2/(0.8·2/3) = 0.375 m/s,
    # a = 1.40625 m/s², ω = 0.375/r = 235.619 rad/s, α = 883.573 rad/s²
    # F = 6·9.80665·sin 15° + 0.01·6·9.80665·cos 15° + 6·1.40625 = 15.2290 + 0.568357 + 8.4375 = 24.2348 N
    # T = 24.2348·r/0.9 + 0.25e-4·883.573 = 0.0428567 + 0.0220893 = 0.0649460 N·m
    assert first["duration"] == pytest.approx(0.8 / 3, rel=1e-12)
    assert first["speed_start"] == 0.0 and first["speed_end"] == pytest.approx(235.619, rel=1e-5)
    assert first["torque"] == pytest.approx(0.0649460, rel=1e-5)
    # 6·r² + 0.25 kg·cm² = 6·2.53303e-6 + 2.5e-5 = 4.01982e-5 kg·m²
    assert out["inertia"] == pytest.approx(4.01982e-5, rel=1e-5)
    assert not (tmp_path / "none.duckdb").exists()          # reads no catalogue


def test_table_names_every_segment_and_its_source(tmp_path):
    r = run("--db", tmp_path / "none.duckdb", "cycle", STAGE)
    assert r.exit_code == 0, r.output
    lines = r.output.splitlines()
    assert lines[0] == ("envelope screw_stage (" + str(STAGE) + "): 11 segment(s), 12.3 s per cycle, repeated, "
                        "at the gear output")
    assert lines[1].startswith("mechanism screw: lead 10 mm, mass 6 kg, efficiency 0.9, back_efficiency 0.8")
    assert lines[1].endswith("; effective radius 1.592 mm")
    cells = [[c.strip() for c in line.split("│")[1:-1]] for line in lines if line.startswith("│")]
    assert cells[0] == ["extend accel", "motion.moves[0]", "0.2667", "64.95", "0", "2250"]
    assert cells[8] == ["return accel", "motion.moves[2]", "0.75", "6.422", "0", "-2360"]
    as_json = json.loads(run("--db", tmp_path / "none.duckdb", "cycle", STAGE, "--format", "json").output)
    assert [c[0] for c in cells] == [s["name"] for s in as_json["segments"]]
    assert re.search(r"\[mN·m\]", r.output) and re.search(r"\[rpm\]", r.output)
    assert lines[-1] == ("load inertia at the gear output: 402 g·cm² (reflected from the mechanism; "
                         "for information: the torques include its acceleration)")


def test_csv_is_si(tmp_path):
    r = run("--db", tmp_path / "none.duckdb", "cycle", ROOT / "queries" / "camera_pan.toml", "--format", "csv")
    assert r.exit_code == 0, r.output
    rows = r.output.splitlines()
    assert rows[0] == "segment,from,time [s],torque [N·m],speed start [rad/s],speed end [rad/s]"
    # sweep right: 0.05 N·m + 0.01 kg·m²·(2π rad/s)/0.2 s = 0.364159 N·m (load.inertia accelerated)
    name, source, dur, torque, w0, w1 = rows[1].split(",")
    assert (name, source, float(dur), float(w0)) == ("sweep right", "cycle.segments[0]", 0.2, 0.0)
    assert float(torque) == pytest.approx(0.364159, rel=1e-5)
    assert float(w1) == pytest.approx(2 * math.pi, rel=1e-12)


def test_operating_points_have_no_duration(tmp_path):
    r = run("--db", tmp_path / "none.duckdb", "cycle", ROOT / "queries" / "water_pump.toml", "--format", "json")
    out = json.loads(r.output)
    assert [s["duration"] for s in out["segments"]] == [None, None]
    assert out["segments"][0]["speed_start"] == pytest.approx(3000 * math.pi / 30, rel=1e-12)


def test_bad_envelope_is_one_line_and_exit_2(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(STAGE.read_text(encoding="utf-8").replace('kind = "screw"', 'kind = "scissor"'),
                   encoding="utf-8")
    r = CliRunner().invoke(cli, ["--db", str(tmp_path / "none.duckdb"), "cycle", str(bad)])
    assert r.exit_code == 2
    assert r.output.strip().splitlines() == [
        f"error: {bad}:load.mechanism.kind: 'scissor' is not allowed, expected one of screw, belt, rack_pinion, "
        "drum, wheel, rotary"]
