"""Properties of the derivation closure over random, physically valid motors.

A motor is drawn from its base parameters (V, R, Kt, I0, J, L, thermal data,
nominal torque) and its full record is computed with the *forward* functions of
:mod:`catalog.physics`.  ``derive_columns`` is then given only a sufficient subset
of that record and must reproduce the rest.  The forward functions are the
reference here; they are themselves checked against textbook relations in
tests/physics.

Tolerance: every value is reproduced to rel 1e-9.  The solvers marked
``fragile`` (I0 = Is − Ts/Kt, I0 = (V − Ke·ω0)/R, R = (V − Ke·ω0)/I0, I0 = In − Tn/Kt,
I0 from the nominal point) subtract two nearly equal numbers; the loss is bounded by
the condition number Is/I0 (or V/(R·I0), In/I0 times V/(R·In)), which the drawn ranges
(I0 = 0.5–10 % of V/R, Tn = 10–60 % of Ts) keep below about 2000, i.e. at most ~3.3 of
the ~16 digits of a double.  So 1e-9 holds for them too, with
about four orders of margin: the fragility matters for rounded datasheet numbers,
not for float round-off, and these tests use exact floats.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from catalog import physics as P
from catalog.derive import (DEFAULT_REFERENCE_TEMPERATURE, EQUATIONS, RATING_AMBIENT, derive_columns,
                            residuals)

REL = 1e-9

V, R, I0, KT, KE = "nominal_voltage", "terminal_resistance", "no_load_current", "torque_constant", "back_emf_constant"
KV, IS, TS, W0, G = "speed_constant", "stall_current", "stall_torque", "no_load_speed", "speed_torque_gradient"
TM, TE, J, L = "mechanical_time_constant", "electrical_time_constant", "rotor_inertia", "terminal_inductance"
TF, KM, ETA, PMAX = "friction_torque", "motor_constant", "max_efficiency", "max_output_power"
IETA = "max_efficiency_current"
TN, IN, WN = "nominal_torque", "nominal_current", "nominal_speed"
RTH1, RTH2, TMAX = "thermal_resistance_winding_housing", "thermal_resistance_housing_ambient", "max_winding_temperature"
TREF, ICONT, TCONT = "resistance_reference_temperature", "max_continuous_current", "max_continuous_torque"

FULL_FIELDS = (V, R, I0, KT, KE, KV, IS, TS, W0, G, TM, TE, J, L, TF, KM, ETA, IETA, PMAX, TN, IN, WN,
               RTH1, RTH2, TMAX, TREF, ICONT, TCONT)

# Sufficient sets of the electrical constants: each determines V, R, Kt(=Ke), I0.
CORE_FAMILIES = {
    "V R Kt I0": {V, R, KT, I0},
    "V Is Ts w0 I0": {V, IS, TS, W0, I0},  # R = V/Is, Kt = Ts/(Is − I0)
    "V Kv Ts Is": {V, KV, TS, IS},  # I0 = Is − Ts/Kt (fragile)
    "V Kv w0 Is": {V, KV, W0, IS},  # I0 = (V − Ke·ω0)/R (fragile)
    "V R Ke w0": {V, R, KE, W0},  # I0 from the no-load speed (fragile)
    "Kt R Is I0": {KT, R, IS, I0},  # V = Is·R
    "Is Ts w0 I0 R": {IS, TS, W0, I0, R},  # V = Is·R, Kt from stall, Ke from ω0
    "V Km Ke I0": {V, KM, KE, I0},  # R = (Kt/Km)²
    "G Kt Is I0": {G, KT, IS, I0},  # R = G·Kt·Ke, V = Is·R
    "V w0 G Kt Tf": {V, W0, G, KT, TF},  # I0 = Tf/Kt, Ts = ω0/G, Is, R = V/Is
    "V R Kt eta": {V, R, KT, ETA},  # I0 = Is·(1 − √η)²
    "V Ke tau_e L Ts I0": {V, KE, TE, L, TS, I0},  # R = L/τe
    "V R Kt In Tn": {V, R, KT, IN, TN},  # I0 = In − Tn/Kt (fragile)
    "V R Kt wn Tn": {V, R, KT, WN, TN},  # I0 from the nominal point on the speed-torque line (fragile)
}
# the other fields are not derivable from the electrical constants; one of each group
MECHANICAL = ({J}, {TM})
INDUCTIVE = ({L}, {TE})
NOMINAL = ({TN}, {IN}, {WN})
THERMAL = {RTH1, RTH2, TMAX}


def loguniform(lo, hi):
    return st.floats(math.log10(lo), math.log10(hi)).map(lambda e: 10.0 ** e)


@st.composite
def motors(draw):
    """The full record (SI) of a random motor computed with the forward physics functions."""
    v = draw(st.floats(3.0, 60.0))
    r = draw(loguniform(0.05, 50.0))
    kt = draw(loguniform(1e-3, 0.5))
    i0 = draw(st.floats(0.005, 0.10)) * v / r
    j = draw(loguniform(1e-8, 1e-3))
    ind = draw(loguniform(1e-6, 1e-2))
    rth1 = draw(st.floats(0.5, 20.0))
    rth2 = draw(st.floats(2.0, 60.0))
    tmax = draw(st.floats(85.0, 180.0)) + 273.15
    tref = draw(st.one_of(st.just(DEFAULT_REFERENCE_TEMPERATURE), st.floats(288.15, 313.15)))
    ke = P.back_emf_constant_from_torque_constant(kt)
    i_s = P.stall_current(v, r)
    ts = P.stall_torque(kt, i_s, i0)
    tn = draw(st.floats(0.10, 0.60)) * ts
    icont = P.max_continuous_current(tmax, r, rth1, rth2, RATING_AMBIENT, tref)
    # a motor whose continuous current is below its no-load current cannot run continuously
    assume(icont > 1.05 * i0)
    rec = {
        V: v, R: r, I0: i0, KT: kt, KE: ke, J: j, L: ind, RTH1: rth1, RTH2: rth2, TMAX: tmax, TREF: tref,
        KV: P.speed_constant_from_torque_constant(kt),
        IS: i_s, TS: ts,
        W0: P.no_load_speed(v, r, i0, ke),
        G: P.speed_torque_gradient(r, kt, ke),
        TM: P.mechanical_time_constant(j, r, kt, ke),
        TE: P.electrical_time_constant(ind, r),
        TF: P.friction_torque(kt, i0),
        KM: P.motor_constant(kt, r),
        ETA: P.max_efficiency(i0, i_s),
        IETA: P.max_efficiency_current(i0, i_s),
        PMAX: P.max_output_power(v, r, i0),
        TN: tn,
        IN: P.current_at_torque(tn, kt, i0),
        WN: P.speed_at_torque(tn, v, r, kt, ke, i0),
        ICONT: icont,
        TCONT: P.torque_at_current(icont, kt, i0),
    }
    assert set(rec) == set(FULL_FIELDS)
    return {k: float(x) for k, x in rec.items()}


@st.composite
def motor_with_subset(draw):
    """(full record, family name, given field names): a sufficient subset, possibly with extras."""
    rec = draw(motors())
    family = draw(st.sampled_from(sorted(CORE_FAMILIES)))
    given_fields = set(CORE_FAMILIES[family]) | THERMAL
    given_fields |= draw(st.sampled_from(MECHANICAL)) | draw(st.sampled_from(INDUCTIVE))
    given_fields |= draw(st.sampled_from(NOMINAL))
    # 25 °C is what derive assumes when the datasheet states none; any other must be given
    if rec[TREF] != DEFAULT_REFERENCE_TEMPERATURE or draw(st.booleans()):
        given_fields.add(TREF)
    # a random superset: any further field of the (consistent) full record
    given_fields |= draw(st.sets(st.sampled_from(FULL_FIELDS)))
    return rec, family, frozenset(given_fields)


def columns_of(rows, fields=FULL_FIELDS):
    """Numpy columns (NaN = missing) of a list of {field: value} dicts."""
    return {f: np.array([row.get(f, np.nan) for row in rows], dtype=float) for f in fields}


SETTINGS = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@SETTINGS
@given(st.lists(motor_with_subset(), min_size=1, max_size=6))
def test_sufficient_subset_reproduces_full_record(cases):
    """(a) every other field is reproduced; (c) given cells are bit-identical afterwards."""
    rows = [{f: rec[f] for f in subset} for rec, _, subset in cases]
    cols = columns_of(rows)
    before = {f: c.copy() for f, c in cols.items()}
    result = derive_columns(cols)
    for f in cols:  # the input arrays are not modified
        np.testing.assert_array_equal(cols[f], before[f])
    for k, (rec, family, subset) in enumerate(cases):
        for f in FULL_FIELDS:
            got = result.columns[f][k]
            if f in subset:
                # (c) given: the very same double, and no derivation recorded for it
                assert got == rec[f] and result.origin[f][k] is None, (family, f)
            else:
                assert result.origin[f][k] is not None, f"{f} not derived from {family} + {sorted(subset)}"
                assert got == pytest.approx(rec[f], rel=REL), (family, f, result.equation[f][k])
        # nothing is invented beyond the record's fields
        for f, col in result.columns.items():
            if f not in FULL_FIELDS:
                assert np.isnan(col[k]), f


@SETTINGS
@given(st.lists(motor_with_subset(), min_size=1, max_size=6))
def test_derivation_is_idempotent(cases):
    """(b) deriving the derived output again derives nothing and changes no bit."""
    rows = [{f: rec[f] for f in subset} for rec, _, subset in cases]
    first = derive_columns(columns_of(rows))
    second = derive_columns(first.columns)
    assert second.derived_count() == 0
    assert set(second.columns) == set(first.columns)
    for f, col in first.columns.items():
        np.testing.assert_array_equal(second.columns[f], col, err_msg=f)
    # and deriving the same given subset twice gives the same bits and the same provenance
    again = derive_columns(columns_of(rows))
    for f, col in first.columns.items():
        np.testing.assert_array_equal(again.columns[f], col, err_msg=f)
        assert list(again.equation[f]) == list(first.equation[f])


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(motors())
def test_every_solver_reproduces_the_full_record(rec):
    """Every solver of every relation, given the other fields of a consistent record,
    returns the field it solves for (the forward functions above are the reference)."""
    for eq in EQUATIONS:
        for s in eq.solvers:
            got = s.func(*(rec[name] for name in s.inputs))
            assert got == pytest.approx(rec[s.output], rel=REL), (eq.name, s.output, s.func.__name__)


@SETTINGS
@given(st.lists(motors(), min_size=1, max_size=6))
def test_full_consistent_record_has_tiny_residuals(recs):
    """(d) a full, consistent record over-determines every relation; all residuals < 1e-9."""
    out = residuals(columns_of(recs))
    assert {eq.name for eq, *_ in out} == {eq.name for eq in EQUATIONS}  # every relation checked
    for eq, idx, _given, implied, res in out:
        assert list(idx) == list(range(len(recs)))
        assert np.all(np.isfinite(res)), eq.name
        assert np.max(np.abs(res)) < 1e-9, (eq.name, res)


# A +30 % error in a field shows as a residual above 10 % of a relation holding that
# field.  The weakest cases (worst corner of the drawn ranges):
#   nominal_torque: In = Tn/Kt + I0, |res| = 0.3·a/(1.3·a + I0) with a = Tn/Kt ≥ 0.09·Is,
#     I0 ≤ 0.1·Is  ->  |res| ≥ 0.124;
#   resistance_reference_temperature: Icont ∝ 1/√R(Tmax) with the copper law, |res| ≈ 0.137.
# The thermal resistances are left out: only their sum enters, so see the exact check below.
PERTURBED = tuple(f for f in FULL_FIELDS if f not in (RTH1, RTH2))


@SETTINGS
@given(motors(), st.sampled_from(PERTURBED))
def test_perturbed_field_is_flagged_by_a_relation_holding_it(rec, field):
    """(e) +30 % on one given field: some relation containing that field has |residual| > 0.1."""
    bad = dict(rec)
    bad[field] = rec[field] * 1.3
    out = residuals(columns_of([bad]))
    hits = [(eq.name, float(res[0])) for eq, _idx, _g, _imp, res in out if abs(res[0]) > 0.1]
    assert hits, f"no residual above 10 % after +30 % on {field}"
    by_name = {eq.name: eq for eq in EQUATIONS}
    assert any(field in by_name[name].fields for name, _ in hits), (field, hits)
    # relations not holding the field stay consistent
    for eq, _idx, _g, _imp, res in out:
        if field not in eq.fields:
            assert abs(res[0]) < 1e-9, (field, eq.name, res[0])


@SETTINGS
@given(motors(), st.sampled_from((RTH1, RTH2)))
def test_perturbed_thermal_resistance_residual_is_exact(rec, field):
    """+30 % on one thermal resistance moves only the thermal relation, by exactly
    √((Rth + 0.3·Rth_i)/Rth) − 1 (Icont ∝ 1/√(Rth1 + Rth2)), which is below 10 % when
    the other resistance dominates: hence its own exact check instead of (e)."""
    bad = dict(rec)
    bad[field] = rec[field] * 1.3
    rth = rec[RTH1] + rec[RTH2]
    expected = math.sqrt((rth + 0.3 * rec[field]) / rth) - 1.0  # algebra of P.max_continuous_current
    out = {eq.name: float(res[0]) for eq, _i, _g, _imp, res in residuals(columns_of([bad]))}
    thermal = "maximum continuous current, thermal model at 25 °C ambient"
    assert out[thermal] == pytest.approx(expected, rel=1e-9)
    assert all(abs(v) < 1e-9 for name, v in out.items() if name != thermal)


def test_brushless_line_to_line_constants_are_not_equated():
    """Kt = Ke holds only on a DC-equivalent basis: for a line-to-line record the
    dc_constants relations are skipped, the others still apply."""
    cols = {KT: np.array([0.02, 0.02]), V: np.array([24.0, 24.0]), R: np.array([2.0, 2.0])}
    texts = {"constant_basis": np.array(["line-to-line-rms", "dc-equivalent"], dtype=object)}
    res = derive_columns(cols, texts)
    assert np.isnan(res.columns[KE][0]) and np.isnan(res.columns[KV][0])
    assert res.columns[KE][1] == 0.02
    assert res.columns[IS][0] == 12.0 and res.columns[IS][1] == 12.0  # V/R is basis free
    assert res.equation[IS][0] == "stall current = V/R"


def test_reference_temperature_defaults_to_25_celsius_where_a_resistance_is_known():
    cols = {R: np.array([2.0, np.nan, 3.0]), TREF: np.array([np.nan, np.nan, 310.0])}
    res = derive_columns(cols)
    assert res.columns[TREF][0] == 298.15
    assert res.equation[TREF][0] == "assumed datasheet reference temperature 25 °C"
    assert np.isnan(res.columns[TREF][1]) and res.origin[TREF][1] is None  # no resistance: no assumption
    assert res.columns[TREF][2] == 310.0 and res.origin[TREF][2] is None  # given: kept


def test_invalid_solver_results_are_not_stored():
    """A solver result outside the schema bounds (here a negative no-load current from
    inconsistent data) is not stored: the field stays missing."""
    # Is − Ts/Kt = 1 − 0.05/0.02 < 0
    res = derive_columns({TS: np.array([0.05]), KT: np.array([0.02]), IS: np.array([1.0])})
    assert np.isnan(res.columns[I0][0]) and res.origin[I0][0] is None
