"""Two-node thermal model against an independent numerical simulation.

Source of the reference: scipy.integrate.solve_ivp of the lumped two-node
network (textbook chapter on heating and cooling of electrical machines)
    Cw·dTw/dt = I²·R(Tw) − (Tw − Th)/Rth1
    Ch·dTh/dt = (Tw − Th)/Rth1 − (Th − Ta)/Rth2
with R(T) = R20·(1 + α20·(T − 20 °C)), α20 = 0.00393 /K (IEC 60028), and
Cw = τw/Rth1, Ch = τ_motor/Rth2.  R(T) is written about 20 °C here on
purpose, independent of the re-referencing done by the code (record at 25 °C).
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq, minimize_scalar

from catalog import physics as ph

ALPHA20, T20 = 0.00393, 293.15
TREF = 298.15                      # record reference temperature (25 °C)
R25 = 1.5                          # terminal resistance at 25 °C [Ω]
R20 = R25 / (1.0 + ALPHA20 * (TREF - T20))
RTH1, RTH2, TAU_W, TAU_M, TA = 2.0, 6.0, 4.0, 60.0, 313.15
CW, CH = TAU_W / RTH1, TAU_M / RTH2
MOTOR = (R25, RTH1, RTH2, TAU_W, TAU_M, TA)


def resistance(t):
    return R20 * (1.0 + ALPHA20 * (t - T20))


def rhs(t, x, current):
    tw, th = x
    loss = current * current * resistance(tw)
    return [(loss - (tw - th) / RTH1) / CW,
            ((tw - th) / RTH1 - (th - TA) / RTH2) / CH]


def run(current, t_end, x0, **kw):
    return solve_ivp(rhs, (0.0, t_end), x0, args=(current,), method="LSODA",
                     rtol=1e-12, atol=1e-10, **kw)


def cycle(durations, currents, x0, grid=4001):
    """One pass through the profile; returns end state and the sampled peak."""
    peak, peak_time, elapsed, x = -np.inf, 0.0, 0.0, list(x0)
    for duration, current in zip(durations, currents):
        sol = run(current, duration, x, dense_output=True)
        t = np.linspace(0.0, duration, grid)
        w = sol.sol(t)[0]
        k = int(np.argmax(w))
        if w[k] > peak:
            lo, hi = t[max(k - 1, 0)], t[min(k + 1, grid - 1)]
            best = minimize_scalar(lambda s: -sol.sol(s)[0], bounds=(lo, hi),
                                   method="bounded", options={"xatol": 1e-12})
            value = max(w[k], -best.fun)
            if value > peak:
                peak, peak_time = value, elapsed + (best.x if -best.fun >= w[k] else t[k])
        x = list(sol.y[:, -1])
        elapsed += duration
    return np.array(x), peak, peak_time


def test_steady_temperature_with_resistance_rise():
    # Source: solve_ivp to steady state, and brentq on Tw − Ta = I²·R(Tw)·Rth.
    current = 2.5
    sol = run(current, 3000.0, [TA, TA])
    steady = ph.steady_winding_temperature(current, R25, RTH1, RTH2, TA, TREF)
    root = brentq(lambda t: t - TA - current ** 2 * resistance(t) * (RTH1 + RTH2),
                  TA, 2000.0, xtol=1e-13)
    assert steady == pytest.approx(root, rel=1e-12)
    assert steady == pytest.approx(sol.y[0, -1], rel=1e-9)
    housing = ph.steady_housing_temperature(current, R25, RTH1, RTH2, TA, TREF)
    assert housing == pytest.approx(sol.y[1, -1], rel=1e-9)
    # the periodic solver with one long segment is the same steady state
    assert ph.periodic_winding_temperature([10.0], [current], *MOTOR, TREF) == \
        pytest.approx(root, rel=1e-12)


def test_max_continuous_current_reaches_the_limit_in_simulation():
    # Source: solve_ivp at the returned current settles at Tmax (class F).
    t_max = 428.15
    current = ph.max_continuous_current(t_max, R25, RTH1, RTH2, TA, TREF)
    sol = run(current, 3000.0, [TA, TA])
    assert sol.y[0, -1] == pytest.approx(t_max, rel=1e-9)


def test_runaway_threshold_just_below_converges_just_above_diverges():
    # Source: solve_ivp; runaway when I²·dR/dT·(Rth1 + Rth2) ≥ 1.
    threshold = ph.thermal_runaway_current(R25, RTH1, RTH2, TREF)
    assert threshold == pytest.approx(1.0 / np.sqrt(R20 * ALPHA20 * (RTH1 + RTH2)),
                                      rel=1e-12)
    below, above = 0.97 * threshold, 1.03 * threshold
    assert not ph.thermal_runaway(below, R25, RTH1, RTH2, TREF)
    assert ph.thermal_runaway(above, R25, RTH1, RTH2, TREF)
    assert ph.steady_winding_temperature(above, R25, RTH1, RTH2, TA, TREF) == np.inf
    assert ph.periodic_winding_temperature([5.0], [above], *MOTOR, TREF) == np.inf

    steady = ph.steady_winding_temperature(below, R25, RTH1, RTH2, TA, TREF)
    sol = run(below, 40000.0, [TA, TA])
    assert sol.y[0, -1] == pytest.approx(steady, rel=1e-7)
    assert abs(rhs(0.0, sol.y[:, -1], below)[0]) < 1e-9

    sol = run(above, 40000.0, [TA, TA])
    late = sol.y[0, -1]
    assert late > 1e6 and late > 100 * steady
    assert rhs(0.0, sol.y[:, -1], above)[0] > 0.0   # still heating


OVERLOAD = ([2.0, 6.0, 4.0], [7.0, 1.5, 0.0])        # s, A: 7 A is above runaway


def test_periodic_peak_matches_repeated_cycle_simulation():
    # Source: solve_ivp over repeated cycles until periodic (change < 1e-10 K).
    durations, currents = OVERLOAD
    assert ph.thermal_runaway(7.0, R25, RTH1, RTH2, TREF)   # short overload only
    peak, trajectory = ph.periodic_winding_temperature(
        durations, currents, *MOTOR, TREF, trajectory=True)
    x = np.array([TA, TA])
    for _ in range(400):
        x_new, sim_peak, _ = cycle(durations, currents, x, grid=11)
        converged = np.max(np.abs(x_new - x)) < 1e-10
        x = x_new
        if converged:
            break
    assert converged
    _, sim_peak, _ = cycle(durations, currents, x)
    assert peak == pytest.approx(sim_peak, rel=1e-9)
    start = [trajectory.winding_temperature[0], trajectory.housing_temperature[0]]
    assert start == pytest.approx(list(x), rel=1e-9)
    end = [trajectory.winding_temperature[-1], trajectory.housing_temperature[-1]]
    assert end == pytest.approx(start, rel=1e-12)


def test_periodic_state_is_a_fixed_point_of_the_simulated_cycle():
    # Source: one solve_ivp cycle started at the returned periodic state.
    durations, currents = OVERLOAD
    _, trajectory = ph.periodic_winding_temperature(
        durations, currents, *MOTOR, TREF, trajectory=True, samples_per_segment=4)
    x0 = [trajectory.winding_temperature[0], trajectory.housing_temperature[0]]
    x_end, _, _ = cycle(durations, currents, x0, grid=11)
    assert list(x_end) == pytest.approx(x0, rel=1e-10)
    # every sampled point of the trajectory lies on the simulated curve
    sol = run(currents[0], durations[0], x0, dense_output=True)
    t = trajectory.time[:5]
    assert trajectory.winding_temperature[:5] == pytest.approx(sol.sol(t)[0], rel=1e-10)


def test_peak_inside_a_segment_is_found_exactly():
    # Source: solve_ivp.  Housing hot (above the steady state of the current),
    # winding just cooled to housing temperature: the fast winding node first
    # rises above the housing, then follows the cooling housing down, so the
    # peak lies inside the segment, not at an end.
    hot = 420.0
    durations, currents = [200.0], [1.5]
    assert ph.steady_housing_temperature(1.5, R25, RTH1, RTH2, TA, TREF) < hot
    peak = ph.transient_winding_temperature(
        durations, currents, *MOTOR, TREF, initial_winding_temperature=hot,
        initial_housing_temperature=hot)
    x_end, sim_peak, sim_time = cycle(durations, currents, [hot, hot], grid=20001)
    assert 1.0 < sim_time < 199.0 and sim_peak > max(hot, x_end[0]) + 1.0
    assert peak == pytest.approx(sim_peak, rel=1e-10)


def test_transient_from_cold_matches_simulation():
    # Source: solve_ivp for one pass from ambient.
    durations, currents = [30.0, 10.0, 20.0], [4.0, 7.5, 0.5]
    peak, trajectory = ph.transient_winding_temperature(
        durations, currents, *MOTOR, TREF, trajectory=True)
    x_end, sim_peak, _ = cycle(durations, currents, [TA, TA])
    assert peak == pytest.approx(sim_peak, rel=1e-9)
    assert trajectory.winding_temperature[-1] == pytest.approx(x_end[0], rel=1e-10)
    assert trajectory.housing_temperature[-1] == pytest.approx(x_end[1], rel=1e-10)
    assert trajectory.time[-1] == pytest.approx(60.0, rel=1e-15)


def test_vectorised_over_motors_and_profiles_equals_one_by_one():
    # Source: consistency with the scalar calls (checked above against solve_ivp).
    resistances = np.array([1.0, 1.5, 2.0])
    ambients = np.array([293.15, 313.15, 333.15])
    durations = np.array([[2.0, 6.0, 4.0], [1.0, 1.0, 10.0], [5.0, 5.0, 5.0]])
    currents = np.array([[6.0, 1.5, 0.0], [4.0, 0.0, 1.0], [2.0, 2.5, 0.5]])
    batch = ph.periodic_winding_temperature(durations, currents, resistances, RTH1,
                                            RTH2, TAU_W, TAU_M, ambients, TREF)
    assert batch.shape == (3,)
    for k in range(3):
        one = ph.periodic_winding_temperature(durations[k], currents[k], resistances[k],
                                              RTH1, RTH2, TAU_W, TAU_M, ambients[k],
                                              TREF)
        assert batch[k] == pytest.approx(one, rel=1e-14)
    shared = ph.periodic_winding_temperature(durations[0], currents[0], resistances,
                                             RTH1, RTH2, TAU_W, TAU_M, TA, TREF)
    assert shared.shape == (3,)


def test_very_long_segments_and_missing_data():
    # Source: steady state (closed form, checked against brentq above); a
    # segment 10^4 time constants long must not overflow; NaN stays NaN.
    current = 2.5
    steady = ph.steady_winding_temperature(current, R25, RTH1, RTH2, TA, TREF)
    long_run = ph.periodic_winding_temperature([1e6, 1e6], [current, current], *MOTOR,
                                               TREF)
    assert long_run == pytest.approx(steady, rel=1e-12)
    missing = ph.periodic_winding_temperature([1.0], [1.0], np.nan, RTH1, RTH2, TAU_W,
                                              TAU_M, TA)
    assert np.isnan(missing)
    with pytest.raises(ValueError):
        ph.periodic_winding_temperature([-1.0], [1.0], *MOTOR)


def test_zero_length_cycle_is_rejected():
    # Source: definition of periodic duty (IEC 60034-1): a cycle has a duration.
    with pytest.raises(ValueError):
        ph.periodic_winding_temperature([0.0, 0.0], [1.0, 2.0], *MOTOR)
