"""Contradictions visible only through derived values (derive.hidden_residuals).

Each case is a datasheet worked by hand: the implied value is computed here from the
textbook formulas of the linear DC motor (Is = V/R, Ts = Kt·(Is − I0), ω0 = (V − R·I0)/Ke,
τm = J·R/(Kt·Ke), ω = (V − R·(T + Kt·I0)/Kt)/Ke, with Kt = Ke in SI), independently of the
relation table, and unit factors come from scipy.constants (CODATA/NIST SP 811).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants as sc
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from catalog.derive import derive_columns, hidden_residuals, residuals

# a consistent small brushed motor (SI), the textbook relations give the rest
V, R, KT, I0, J = 24.0, 2.0, 0.02, 0.05, 4.0e-6
IS = V / R                                   # 12 A
TS = KT * (IS - I0)                          # 0.239 N·m
W0 = (V - R * I0) / KT                       # 1195 rad/s
TAU_M = J * R / (KT * KT)                    # 20 ms
TN = 0.05
WN = (V - R * (TN + KT * I0) / KT) / KT      # speed at Tn on the speed-torque line


def run(**given):
    cols = {name: np.array([value], dtype=float) for name, value in given.items()}
    result = derive_columns(cols)
    return cols, result, hidden_residuals(result)


def base(**extra):
    return dict(nominal_voltage=V, terminal_resistance=R, torque_constant=KT, no_load_current=I0, **extra)


def names(text):
    return set(text.split(", "))


def test_consistent_datasheet_has_no_hidden_contradiction():
    _, _, found = run(**base(stall_torque=TS, no_load_speed=W0, rotor_inertia=J,
                             mechanical_time_constant=TAU_M, nominal_torque=TN, nominal_speed=WN))
    assert len(found.idx) == 0


def test_stall_torque_30_percent_high_is_flagged_through_the_derived_stall_current():
    # V, R, Kt, I0 and a stall torque 30 % too high: Is = V/R is derived, Ts = Kt·(Is − I0)
    # is then over-determined by four known values of which Ts was never used
    cols, result, found = run(**base(stall_torque=1.3 * TS))
    assert not any(abs(res[0]) > 0.1 for *_, res in residuals(cols))   # no relation of given values alone
    assert result.equation["stall_current"][0] == "stall current = V/R"
    assert len(found.idx) == 1
    assert found.relation[0] == "stall torque = Kt·(Is − I0), through derived stall_current"
    assert found.field[0] == "stall_torque"
    assert found.value[0] == 1.3 * TS
    assert found.implied[0] == pytest.approx(KT * (V / R - I0), rel=1e-12)   # Ts = Kt·(V/R − I0), by hand
    assert found.residual[0] == pytest.approx(0.30, rel=1e-12)
    assert names(found.given[0]) == {"nominal_voltage", "terminal_resistance", "torque_constant",
                                     "no_load_current", "stall_torque"}


def test_no_load_speed_is_flagged_through_the_derived_back_emf_constant():
    _, _, found = run(**base(no_load_speed=0.8 * W0))
    assert list(found.field) == ["no_load_speed"]
    assert found.relation[0] == "no-load speed = (V − R·I0)/Ke, through derived back_emf_constant"
    assert found.implied[0] == pytest.approx((V - R * I0) / KT, rel=1e-12)   # ω0 = (V − R·I0)/Ke, Ke = Kt
    assert found.residual[0] == pytest.approx(-0.2, rel=1e-12)


def test_nominal_speed_is_flagged_through_the_derived_back_emf_constant():
    _, _, found = run(**base(nominal_torque=TN, nominal_speed=1.25 * WN))
    assert list(found.field) == ["nominal_speed"]
    assert found.relation[0].startswith("nominal speed on the speed-torque line, through derived ")
    assert found.implied[0] == pytest.approx(WN, rel=1e-12)
    assert found.residual[0] == pytest.approx(0.25, rel=1e-12)
    assert "nominal_torque" in names(found.given[0])


def test_inertia_in_oz_in2_typed_as_oz_in_s2_is_flagged_through_the_mechanical_time_constant():
    # The datasheet's rotor inertia is 0.4 oz·in² (a mass moment), typed as 0.4 oz·in·s² (a
    # force·length·time², = kg·m²): the value read is g0/(1 in/s²) = 386.09 times too large.
    # Its mechanical time constant is given and right.  Factors: scipy.constants (NIST SP 811).
    j_true = 0.4 * sc.ounce * sc.inch ** 2               # oz·in² -> kg·m²
    j_typed = 0.4 * sc.ounce * sc.g * sc.inch           # ozf·in·s² -> kg·m²
    assert j_typed / j_true == pytest.approx(sc.g / sc.inch, rel=1e-12)   # 386.09
    tau_m = j_true * R / (KT * KT)                       # τm = J·R/(Kt·Ke), Ke = Kt
    _, result, found = run(**base(rotor_inertia=j_typed, mechanical_time_constant=tau_m))
    # one finding, not one per relation holding J: τm = J·gradient holds the same given values
    # and more (the gradient is derived from V, R, I0, Kt), so the smallest set is reported
    assert len(found.idx) == 1
    assert found.field[0] == "mechanical_time_constant"
    assert found.relation[0] == "mechanical time constant = J·R/(Kt·Ke), through derived back_emf_constant"
    assert found.implied[0] == pytest.approx(j_typed * R / (KT * KT), rel=1e-12)
    assert found.residual[0] == pytest.approx(sc.inch / sc.g - 1.0, rel=1e-9)  # 1/386.09 − 1 = −99.7 %
    assert {"rotor_inertia", "mechanical_time_constant", "terminal_resistance", "torque_constant"} \
        == names(found.given[0])


def test_a_contradiction_of_given_values_alone_is_not_repeated_through_derived_ones():
    # Kt and Kv both given and 30 % apart: the relation Kt = 1/Kv flags it; Ke derived from Kt
    # then contradicts Kv in "Kv = 1/Ke" too, with the same given values: not reported twice
    kv = 1.0 / KT
    cols, _, found = run(torque_constant=KT * 1.3, speed_constant=kv)
    direct = [eq.name for eq, _i, _g, _imp, res in residuals(cols) if abs(res[0]) > 0.1]
    assert direct == ["torque constant = 1/speed constant (SI)"]
    assert len(found.idx) == 0


def test_no_check_through_a_fragile_derivation():
    # V, Kv, Ts, Is give I0 only as Is − Ts/Kt, the difference of two nearly equal rounded
    # numbers: Ts rounded to 2 digits moves it by 40 %.  A check through it would flag
    # rounding, so none is made: here a maximum continuous torque 30 % off stays unflagged
    # (Tcont = Kt·(Icont − I0) could only be checked through the fragile I0).
    from catalog.derive import FRAGILE_SOURCE

    ts_rounded = float(f"{TS:.2g}")                       # 0.24 instead of 0.239
    assert abs((IS - ts_rounded / KT) / I0 - 1.0) > 0.3
    icont = 3.0
    _, result, found = run(nominal_voltage=V, speed_constant=1.0 / KT, stall_torque=ts_rounded, stall_current=IS,
                           max_continuous_current=icont, max_continuous_torque=1.3 * KT * (icont - I0))
    assert result.equation["no_load_current"][0] == "stall torque = Kt·(Is − I0)"
    assert result.sources["no_load_current"][0] & FRAGILE_SOURCE
    assert len(found.idx) == 0
    # the same error with I0 given (Kt derived from Kv, well-conditioned) is flagged
    _, _, found = run(nominal_voltage=V, speed_constant=1.0 / KT, no_load_current=I0,
                      max_continuous_current=icont, max_continuous_torque=1.3 * KT * (icont - I0))
    assert list(found.field) == ["max_continuous_torque"]
    assert found.residual[0] == pytest.approx(0.3, rel=1e-9)


def test_store_keeps_and_reports_hidden_contradictions(cat, write):
    head = ("manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],"
            "torque_constant [mNm/A],no_load_current [mA],stall_torque [mNm]\n")
    report = cat.import_([write("m.csv", head + f"Testwerk Antriebe,TH-1,24,2,20,50,{1.3 * TS * 1e3:.6g}\n")])
    assert [f.relation for f in report.flags] == ["stall torque = Kt·(Is − I0), through derived stall_current"]
    flag = report.flags[0]
    assert str(flag).startswith("testwerk-th-1: stall torque = Kt·(Is − I0), through derived stall_current: "
                                "stall_torque given 310.7 mN·m, the other values imply 239 mN·m (+30.0%); given ")
    stored = cat.check()
    assert [str(f) for f in stored] == [str(flag)]
    # deriving again changes nothing; the flag stays until the datasheet is corrected
    before = cat.sql("SELECT * FROM flags")
    cat.derive()
    assert cat.sql("SELECT * FROM flags").equals(before)
    cat.import_([write("fix.csv", "manufacturer,part_number,stall_torque [mNm]\nTestwerk Antriebe,TH-1,239\n")])
    assert cat.check() == []


# -- properties over random consistent motors (the forward functions are the reference) ---------

from tests.derive.test_properties import (FULL_FIELDS, I0 as F_I0, KT as F_KT, R as F_R, TS as F_TS,  # noqa: E402
                              V as F_V, W0 as F_W0, motor_with_subset, motors)

SETTINGS = settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@SETTINGS
@given(st.lists(motor_with_subset(), min_size=1, max_size=6))
def test_consistent_records_have_no_hidden_contradictions(cases):
    rows = [{f: rec[f] for f in subset} for rec, _, subset in cases]
    cols = {f: np.array([row.get(f, np.nan) for row in rows]) for f in FULL_FIELDS}
    found = hidden_residuals(derive_columns(cols))
    assert len(found.idx) == 0, list(zip(found.relation, found.residual))


# Fields that "V R Kt I0" leaves to derivation and no relation of given values alone checks
# against them: +30 % on one of them must show through derived values.
HIDDEN_ONLY = (F_TS, F_W0, "speed_torque_gradient", "max_efficiency", "max_efficiency_current")


@SETTINGS
@given(motors(), st.sampled_from(HIDDEN_ONLY), st.sampled_from((1.3, 0.7)))
def test_a_wrong_value_beside_a_sufficient_set_shows_through_derived_values(rec, field, factor):
    given_fields = (F_V, F_R, F_KT, F_I0)
    cols = {f: np.array([rec[f]]) for f in given_fields}
    cols[field] = np.array([rec[field] * factor])
    assert not any(abs(res[0]) > 0.1 for *_, res in residuals(cols))
    found = hidden_residuals(derive_columns(cols))
    assert len(found.idx) >= 1
    assert any(field in names(g) for g in found.given)
    assert all(abs(r) > 0.1 for r in found.residual)
    assert math.isfinite(float(found.residual[0]))
