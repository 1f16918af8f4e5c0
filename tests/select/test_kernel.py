"""The compiled verdict pass (catalog.select.kernel) against its reference, the numpy path of
catalog.select.evaluate, and its fixed point against catalog.physics.hot_winding_rise."""
from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("numba")

from catalog.physics import hot_winding_rise  # noqa: E402
from catalog.select import evaluate, kernel, load_envelope  # noqa: E402
from catalog.select.candidates import build_candidates  # noqa: E402
from catalog.select.checks import check_keys  # noqa: E402
from catalog.select.registry import CHECKS  # noqa: E402

from test_thermal_model import REVERSING  # noqa: E402

CASES = [
    dict(ambient=40, repeat="true", d1=0.8, d2=1.5, d3=2.0, w=150),
    dict(ambient=25, repeat="true", d1=5.0, d2=20.0, d3=10.0, w=300),
    dict(ambient=60, repeat="false", d1=30.0, d2=200.0, d3=30.0, w=80),
]


def _rows(demo_catalog, env):
    cand = build_candidates(demo_catalog.motors(), demo_catalog.gearheads(), env)
    keys = tuple(dict.fromkeys(evaluate.EVAL_KEYS + check_keys(env)))
    c = cand.take(np.arange(cand.size), keys)
    return cand, {k: np.array(c[k]) for k in keys}


def _harder(c):
    """The demo rows with what the demo data lacks: brush drops, twenty times the friction on a
    third of the rows, missing thermal data on every fifth motor."""
    c = {k: v.copy() for k, v in c.items()}
    n = len(c["ratio"])
    c["brush_voltage_drop"] = np.where(np.arange(n) % 2 == 0, 0.8, 0.0)
    c["friction_torque"] = np.where(np.arange(n) % 3 == 0, 20.0, 1.0) * c["friction_torque"]
    c["thermal_resistance_winding_housing"][c["motor_ix"] % 5 == 0] = np.nan
    return c


@pytest.fixture(params=[(case, hard) for case in CASES for hard in (False, True)],
                ids=[f"case{i}-{'hard' if hard else 'plain'}" for i in range(len(CASES)) for hard in (False, True)])
def case_rows(request, demo_catalog, envelope_file):
    """(envelope, candidate rows) of a reversing cycle on the demo catalogue, with the demo's data or
    the harder one of :func:`_harder`."""
    case, hard = request.param
    env = load_envelope(envelope_file(REVERSING.format(**case)))
    _, c = _rows(demo_catalog, env)
    return env, (_harder(c) if hard else c)


def test_compiled_brackets_are_the_numpy_brackets(case_rows):
    # Reference: evaluate.rise_brackets on the numpy path (itself checked against the exact solution
    # in test_thermal_model.py): the compiled pass forms the same brackets, to rounding.
    env, c = case_rows
    lower, upper = evaluate.rise_brackets(env, c)
    k_lower, k_upper = evaluate.rise_brackets(env, c, compiled=True)
    assert np.isfinite(upper).sum() > 100
    np.testing.assert_allclose(k_upper, upper, rtol=1e-9, atol=1e-9, equal_nan=True)
    np.testing.assert_allclose(k_lower, lower, rtol=1e-9, atol=1e-9, equal_nan=True)


def test_compiled_verdicts_are_the_numpy_verdicts(case_rows):
    # The verdict pass with the compiled brackets and needed voltages: every check's verdict, the open
    # candidates and the numbers at the upper bracket as on the numpy path.
    env, c = case_rows
    kw = dict(exact="band", where=False, energy=False)
    ref = evaluate.checked(env, c, **kw)
    got = evaluate.checked(env, c, compiled=True, **kw)
    np.testing.assert_array_equal(got["open"], ref["open"])
    for key in CHECKS:
        np.testing.assert_array_equal(got["fails_" + key], ref["fails_" + key], err_msg=key)
    assert ref["passed"].any() and (~ref["passed"]).any()
    for key in ("winding_temperature", "voltage_need", "peak_current", "rms_current", "voltage_margin"):
        np.testing.assert_allclose(got[key], ref[key], rtol=1e-9, atol=1e-12, equal_nan=True, err_msg=key)


def test_a_large_selection_runs_compiled_with_the_same_result(demo_catalog, monkeypatch):
    # evaluate_all takes the compiled pass from KERNEL_MIN candidates on: forced on the demo's lift axis,
    # the same verdicts and shortlist numbers as the numpy path.
    from pathlib import Path

    query = Path(__file__).resolve().parents[2] / "queries" / "lift_axis.toml"
    ref = demo_catalog.select(query)
    calls = []
    original = kernel.verdict_pass

    def counted(*args):
        calls.append(len(args[0]))
        return original(*args)

    monkeypatch.setattr(evaluate, "KERNEL_MIN", 0)
    monkeypatch.setattr(kernel, "verdict_pass", counted)
    got = demo_catalog.select(query)
    assert calls and sum(calls) >= len(ref.table)
    assert (got.table["candidate"] == ref.table["candidate"]).all()
    assert (got.table["passed"] == ref.table["passed"]).all()
    assert got.reason_counts().to_dict() == ref.reason_counts().to_dict()
    np.testing.assert_allclose(got.table["winding_temperature"].to_numpy(float),
                               ref.table["winding_temperature"].to_numpy(float), rtol=1e-9, equal_nan=True)


def test_compiled_fixed_point_is_the_physics_fixed_point():
    # catalog.physics.hot_winding_rise (its own tests: the defining equation and runaway) for one value;
    # with an offset, the defining equation y = s(y)·cold + offset and no smaller root.
    rng = np.random.default_rng(5)
    cold = np.r_[rng.uniform(0, 120, 400), 0.0, -1.0, np.nan]
    a = np.r_[rng.uniform(0.002, 0.006, 400), 0.004, 0.004, 0.004]
    b = np.r_[rng.uniform(-0.002, -0.0001, 400), -0.001, -0.001, -0.001]
    ref = hot_winding_rise(cold, a, b)
    got = np.array([kernel.offset_rise(x, 0.0, p, q) for x, p, q in zip(cold, a, b)])
    np.testing.assert_array_equal(np.isinf(got), np.isinf(ref))
    assert np.isinf(ref).sum() > 100 and np.isfinite(ref).sum() > 200      # both kinds are tried
    finite = np.isfinite(ref)
    np.testing.assert_allclose(got[finite], ref[finite], rtol=0, atol=1e-9)
    assert np.isnan(got[-1])
    offset = rng.uniform(0, 40, 400)
    for x, off, p, q in zip(cold[:400], offset, a[:400], b[:400]):
        y = kernel.offset_rise(x, off, p, q)
        s = (lambda t: (1 + p * t) / (1 + q * t) ** 2)
        if np.isfinite(y):
            assert abs(s(y) * x + off - y) < 1e-5
            grid = np.linspace(0, y, 50)[:-1]
            assert np.all(s(grid) * x + off - grid > 0)        # the smallest root
        else:                                                    # no root up to where Kt vanishes
            grid = np.linspace(0, -1 / q, 2000)[:-1]
            assert np.all(s(grid) * x + off - grid > 0)


def test_warming_compiles_the_signature_a_selection_uses(demo_catalog, envelope_file):
    # `make demo` compiles the kernel once (kernel.warm) so that a first large selection loads it from
    # the cache: that is only true if warm() passes the argument types a selection passes.
    kernel.warm()
    env = load_envelope(envelope_file(REVERSING.format(**CASES[0])))
    _, c = _rows(demo_catalog, env)
    evaluate.rise_brackets(env, c, compiled=True)
    assert len(kernel.verdict_pass.signatures) == 1
