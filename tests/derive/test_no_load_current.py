"""The no-load current from the nominal point: I0 = In − Tn/Kt, or from the speed-torque line.

Reference: the nominal point of a datasheet is the steady state of the DC machine under the
nominal load torque.  It is found here by direct numerical integration (scipy.integrate.solve_ivp)
of the textbook machine equations
    L·di/dt = V − R·i − Ke·ω,   J·dω/dt = Kt·i − Kt·I0 − Tn,
run to its steady state; the closure must recover the I0 the simulation used from the
(In, Tn) or (ωn, Tn) it produced, without being told I0.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from catalog.derive import derive_columns, hidden_residuals

V, R, L, KT, J, I0 = 24.0, 2.0, 1.0e-3, 0.02, 4.0e-6, 0.05     # Ke = Kt in SI
TN = 0.06                                                      # nominal load torque [N·m]


@pytest.fixture(scope="module")
def nominal_point():
    def rhs(_t, y):
        i, w = y
        return [(V - R * i - KT * w) / L, (KT * i - KT * I0 - TN) / J]

    tau_m = J * R / (KT * KT)
    sol = solve_ivp(rhs, (0.0, 60 * tau_m), [0.0, 0.0], method="Radau", rtol=1e-12, atol=1e-12)
    i_n, w_n = sol.y[:, -1]
    assert abs(rhs(0, [i_n, w_n])[1]) * J < 1e-9 * TN            # steady: the torques balance
    return float(i_n), float(w_n)


def derive(**given):
    return derive_columns({name: np.array([value]) for name, value in given.items()})


def test_no_load_current_from_nominal_current_and_torque(nominal_point):
    i_n, _ = nominal_point
    result = derive(nominal_voltage=V, terminal_resistance=R, torque_constant=KT, nominal_torque=TN,
                    nominal_current=i_n)
    assert result.columns["no_load_current"][0] == pytest.approx(I0, rel=1e-7)
    assert result.equation["no_load_current"][0] == "nominal current = (Tn + Kt·I0)/Kt"
    # and everything I0 opens: the no-load speed of the simulated machine at zero load torque
    assert result.columns["no_load_speed"][0] == pytest.approx((V - R * I0) / KT, rel=1e-7)


def test_no_load_current_from_the_nominal_point_on_the_speed_torque_line(nominal_point):
    _, w_n = nominal_point
    result = derive(nominal_voltage=V, terminal_resistance=R, torque_constant=KT, nominal_torque=TN,
                    nominal_speed=w_n)
    assert result.columns["no_load_current"][0] == pytest.approx(I0, rel=1e-6)
    assert result.equation["no_load_current"][0] == "nominal speed on the speed-torque line"
    assert result.columns["nominal_current"][0] == pytest.approx(nominal_point[0], rel=1e-7)


def test_a_better_conditioned_source_of_i0_wins():
    # I0 = In − Tn/Kt subtracts two nearly equal numbers (fragile): the friction torque,
    # when given, gives I0 = Tf/Kt directly, and the nominal point is then checked against it
    i_n = TN / KT + I0
    result = derive(torque_constant=KT, friction_torque=KT * I0, nominal_torque=TN, nominal_current=i_n)
    assert result.equation["no_load_current"][0] == "friction torque = Kt·I0"
    assert result.columns["no_load_current"][0] == pytest.approx(I0, rel=1e-12)
    assert len(hidden_residuals(result).idx) == 0


def test_the_line_solver_is_skipped_for_line_to_line_constants(nominal_point):
    _, w_n = nominal_point
    cols = {"nominal_voltage": np.array([V]), "terminal_resistance": np.array([R]),
            "torque_constant": np.array([KT]), "nominal_torque": np.array([TN]), "nominal_speed": np.array([w_n])}
    texts = {"constant_basis": np.array(["line-to-line-rms"], dtype=object)}
    result = derive_columns(cols, texts)
    assert np.isnan(result.columns["no_load_current"][0])   # Ke is not Kt on that basis: no guess
