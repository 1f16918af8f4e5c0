"""Envelopes of any size: refused beyond documented limits, evaluated in bounded memory below them.

Seen before: 150 000 assumed ratios on a 10 000-motor catalogue ended in an 11 GiB allocation
traceback (one row pair per candidate); a 15 000-segment cycle reached 5 GB (arrays of
candidates x segments, and a segments x segments thermal response per motor).  Now
``MAX_SEGMENTS``, ``MAX_RATIOS`` (catalog/select/envelope.py) and ``MAX_CANDIDATES``
(catalog/select/candidates.py) are refused with one line each, and a selection within them
is evaluated in chunks whose scratch memory does not grow with the number of segments
(catalog/select/evaluate.py: ``CHUNK_BYTES``, ``RESPONSE_BYTES``, ``MAPS_BYTES``).
"""
from __future__ import annotations

import os
import subprocess

import numpy as np
import pandas as pd
import pytest

from catalog.errors import InputError
from catalog.select import envelope as envelope_module
from tests.robustness.conftest import PYTHON


def envelope(segments: int = 4, ratios: int = 0, direct: bool = True) -> dict:
    segs = [{"name": f"s{k}", "duration": f"{0.5 + k % 3} s", "torque": f"{0.02 + 0.01 * (k % 5):.2f} N*m",
             "speed_start": f"{(k % 4) * 500} rpm", "speed_end": f"{((k + 1) % 4) * 500} rpm"}
            for k in range(segments)]
    env = {"name": "size", "supply": {"nominal_voltage": "24 V", "min_voltage": "22 V",
                                      "drive_continuous_current": "5 A", "drive_peak_current": "15 A"},
           "environment": {"ambient_temperature": "40 degC"}, "load": {"inertia": "0.00001 kg*m^2"},
           "cycle": {"repeat": True, "segments": segs},
           "gearing": {"direct": direct, "catalogue": False},
           "ranking": {"keys": ["mass"], "top": 5, "pareto": ["mass", "rms_current"]}}
    if ratios:
        env["gearing"]["ratios"] = [round(2 + 0.25 * i, 2) for i in range(ratios)]
    return env


def motors(n: int, seed: int = 5) -> pd.DataFrame:
    """``n`` consistent motors in SI with every constant the thermal model needs."""
    rng = np.random.default_rng(seed)
    r = 10 ** rng.uniform(-0.5, 1.2, n)
    kt = 10 ** rng.uniform(-2.0, -1.0, n)
    return pd.DataFrame({
        "id": [f"size-m{i:05d}" for i in range(n)], "manufacturer": "Size Motors",
        "part_number": [f"M{i:05d}" for i in range(n)], "terminal_resistance": r, "torque_constant": kt,
        "back_emf_constant": kt, "friction_torque": kt * 0.02, "rotor_inertia": 10 ** rng.uniform(-7, -5, n),
        "thermal_resistance_winding_housing": rng.uniform(2, 10, n),
        "thermal_resistance_housing_ambient": rng.uniform(5, 20, n),
        "thermal_time_constant_winding": rng.uniform(5, 40, n), "thermal_time_constant_motor": rng.uniform(300, 900, n),
        "max_winding_temperature": 428.15, "resistance_reference_temperature": 298.15,
        "max_speed": 24 / kt * 1.1, "no_load_speed": 24 / kt, "mass": rng.uniform(0.05, 1.0, n),
        "magnet_material": "ndfeb", "mount": "", "commutation": "brushed"})


# -- refused ---------------------------------------------------------------------------------------

def test_a_cycle_of_15000_segments_is_refused():
    from catalog.select import load_envelope

    with pytest.raises(InputError) as info:
        load_envelope(envelope(segments=15_000))
    assert [str(p) for p in info.value.problems] == [
        "envelope:cycle.segments: 15000 segments, expected at most 1000; merge segments of one load or split "
        "the cycle"]


def test_150000_ratios_are_refused():
    from catalog.select import load_envelope

    with pytest.raises(InputError) as info:
        load_envelope(envelope(ratios=150_000))
    assert [str(p) for p in info.value.problems] == [
        "envelope:gearing.ratios: 150000 assumed ratios (ratios and ratio_range.steps), expected at most 1000; "
        "every motor is a candidate with each"]


def test_the_limits_are_the_documented_ones():
    """README's table of envelope limits names each constant with its value."""
    from pathlib import Path

    from catalog.select.candidates import MAX_CANDIDATES

    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    for name, value in (("MAX_SEGMENTS", envelope_module.MAX_SEGMENTS), ("MAX_RATIOS", envelope_module.MAX_RATIOS),
                        ("MAX_ENVELOPE_DEPTH", envelope_module.MAX_ENVELOPE_DEPTH),
                        ("MAX_ENVELOPE_BYTES", envelope_module.MAX_ENVELOPE_BYTES // 2**20),
                        ("MAX_CANDIDATES", MAX_CANDIDATES)):
        rows = [line for line in readme.splitlines() if f"`{name}`" in line and line.startswith("|")]
        assert rows and f"{value:,}".replace(",", " ") in rows[0], (name, rows)


def test_more_candidates_than_a_selection_holds_is_refused(monkeypatch):
    from catalog.select import candidates, select

    monkeypatch.setattr(candidates, "MAX_CANDIDATES", 1_000)
    with pytest.raises(InputError) as info:
        select(motors(300), pd.DataFrame(), envelope(ratios=3))
    assert [str(p) for p in info.value.problems] == [
        "envelope:gearing: 1,200 candidates (300 motors: 300 direct, 0 with catalogue gearheads, 900 with assumed "
        "ratios), expected at most 1,000; use fewer ratios (gearing.ratios, gearing.ratio_range.steps) or leave "
        "catalogue gearheads out"]


# -- bounded -----------------------------------------------------------------------------------------

CHILD = """
import resource, sys
sys.path.insert(0, {root!r})
from tests.robustness.test_envelope_size import envelope, motors
import pandas as pd
from catalog.select import select
sel = select(motors({n}), pd.DataFrame(), envelope(segments={segments}, ratios={ratios}))
print(sel.counts, len(sel.shortlist))
"""


@pytest.mark.parametrize("n, segments, ratios", [(2000, 1000, 0), (300, 400, 100)],
                         ids=["direct-1000-segments", "ratios-400-segments"])
def test_a_selection_at_the_segment_limit_runs_in_bounded_memory(n, segments, ratios):
    """2000 motors x 1000 segments took 16 GB (a 1001 x 1000 response per motor) before."""
    from pathlib import Path

    root = str(Path(__file__).resolve().parents[2])
    proc = subprocess.Popen([PYTHON, "-c", CHILD.format(root=root, n=n, segments=segments, ratios=ratios)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    out, err = proc.stdout.read(), proc.stderr.read()
    proc.stdout.close()
    proc.stderr.close()
    _pid, status, usage = os.wait4(proc.pid, 0)
    proc.returncode = os.waitstatus_to_exitcode(status)
    assert proc.returncode == 0, err
    assert usage.ru_maxrss < 1_000 * 1024, f"peak RSS {usage.ru_maxrss / 1024:.0f} MB"


def test_chunks_give_the_numbers_of_one_block(monkeypatch):
    """Tiny chunks, no whole-catalogue maps and no response matrices (the sweep instead) give the
    same verdicts and numbers as the default path."""
    from catalog.select import evaluate, select

    m = motors(120)
    env = envelope(segments=12, ratios=7)
    whole = select(m, pd.DataFrame(), env).table
    monkeypatch.setattr(evaluate, "CHUNK_BYTES", 1)       # chunk_rows: 64 candidates
    monkeypatch.setattr(evaluate, "RESPONSE_BYTES", 0)
    monkeypatch.setattr(evaluate, "MAPS_BYTES", 0)
    assert evaluate.chunk_rows(12) == 64
    small = select(m, pd.DataFrame(), env).table
    assert list(small["candidate"]) == list(whole["candidate"])
    assert (small["passed"] == whole["passed"]).all() and (small["reasons"] == whole["reasons"]).all()
    for col in ("winding_temperature", "rms_current", "peak_current", "voltage_margin", "smallest_margin"):
        np.testing.assert_allclose(small[col].to_numpy(float), whole[col].to_numpy(float), rtol=1e-9, atol=1e-12)
    assert whole["passed"].any() and not whole["passed"].all()
