"""The two-node network with R and Kt following the winding (catalog/physics/hot_network.py).

Reference: scipy.integrate.solve_ivp of the network ODE (textbook chapter on
heating and cooling of machines) with the copper loss c·(1 + a·θw)/(1 + b·θw)²
evaluated at the winding rise of every instant (IEC 60028 copper law,
IEC 60404-8-1 reversible coefficient of the magnet), a friction and iron loss
ramping linearly within a segment at the winding or the housing node,
repeated cycle after cycle until periodic, sampled densely for the peak and
integrated (trapezoid on 4001 samples) for the segment means.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from catalog import physics as ph

COPPER = 0.00393 / (1 + 0.00393 * 5.0)   # α at 25 °C, IEC 60028


def simulate(d, c, a, b, r1, r2, cw, ch, periodic, p0, p1, at_winding):
    """(peak rise, per-segment mean rise) by direct integration; (inf, None) when it runs away."""
    def rhs(t, y, k):
        nl = p0[k] + (p1[k] - p0[k]) * t / d[k]
        copper = c[k] * (1 + a * y[0]) / (1 + b * y[0]) ** 2
        pw, phh = (copper + nl, 0.0) if at_winding else (copper, nl)
        return [(pw - (y[0] - y[1]) / r1) / cw, ((y[0] - y[1]) / r1 - y[1] / r2 + phh) / ch]

    y = np.zeros(2)
    for _cycle in range(4000 if periodic else 1):
        start, top, means = y.copy(), y[0], []
        for k in range(len(d)):
            sol = solve_ivp(rhs, (0, d[k]), y, args=(k,), rtol=1e-10, atol=1e-10, dense_output=True)
            t = np.linspace(0, d[k], 4001)
            w = sol.sol(t)[0]
            top = max(top, w.max())
            means.append(np.trapezoid(w, t) / d[k])
            y = sol.y[:, -1]
        if y[0] > 2000:
            return np.inf, None
        if periodic and np.max(np.abs(y - start)) < 1e-9:
            break
    return top, np.array(means)


def case(seed):
    rng = np.random.default_rng(seed)
    s = int(rng.integers(2, 6))
    d = rng.uniform(0.5, 400, s)
    r1, r2 = rng.uniform(0.5, 8), rng.uniform(2, 30)
    cw, ch = rng.uniform(1, 20), rng.uniform(20, 400)
    b = float(rng.choice([-0.002, -0.001, -0.0004, 0.0]))        # ferrite, NdFeB, SmCo, none
    c = rng.uniform(0, 8, s) * (rng.random(s) > 0.3)
    p0 = rng.uniform(0, 3, s) * (rng.random(s) > 0.5)
    p1 = rng.uniform(0, 3, s) * (rng.random(s) > 0.5)
    return d, c, COPPER, b, r1, r2, cw, ch, bool(rng.random() > 0.4), p0, p1, bool(rng.random() > 0.5)


@pytest.mark.parametrize("seed", range(12))
def test_peak_and_segment_means_match_a_simulation(seed):
    d, c, a, b, r1, r2, cw, ch, periodic, p0, p1, at_winding = case(seed)
    sol = ph.hot_network_rise(d, c[:, None], a, b, r1, r2, cw, ch, periodic, p0[:, None], p1[:, None], at_winding)
    peak, means = simulate(d, c, a, b, r1, r2, cw, ch, periodic, p0, p1, at_winding)
    assert sol.peak[0] == pytest.approx(peak, abs=0.01)
    np.testing.assert_allclose(sol.segment_mean[:, 0], means, atol=0.01)


def test_a_long_overload_from_cold_and_its_peak_inside_a_segment():
    # 600 s at a heavy load from cold, then 60 s light: the winding peaks at the end of the overload.
    # A second case where the housing loss keeps heating the winding after the copper loss stops:
    # its peak lies inside the pause.
    d = np.array([600.0, 60.0])
    for c, p0, p1, at_winding in ((np.array([9.0, 0.5]), np.zeros(2), np.zeros(2), True),
                                  (np.array([6.0, 0.0]), np.array([0.0, 12.0]), np.array([0.0, 12.0]), False)):
        sol = ph.hot_network_rise(d, c[:, None], COPPER, -0.001, 2.0, 6.0, 10.0, 200.0, False,
                                  p0[:, None], p1[:, None], at_winding)
        peak, _ = simulate(d, c, COPPER, -0.001, 2.0, 6.0, 10.0, 200.0, False, p0, p1, at_winding)
        assert sol.peak[0] == pytest.approx(peak, abs=0.01)


def test_runaway_is_found_and_rows_do_not_depend_on_each_other():
    # Source: the steady state y = c·Rth·s(y) has no root above c·Rth·max over y of s(y)/y... checked
    # here by the simulation running away.
    d = np.array([20.0, 10.0])
    hot = np.array([60.0, 40.0])
    sol = ph.hot_network_rise(d, hot[:, None], COPPER, -0.001, 3.0, 7.0, 20.0, 600.0, True)
    assert sol.runaway[0] and np.isinf(sol.peak[0])
    assert simulate(d, hot, COPPER, -0.001, 3.0, 7.0, 20.0, 600.0, True, np.zeros(2), np.zeros(2), True)[0] == np.inf
    # a batch of rows gives each row what it gets alone (a row never waits on or steps with the others)
    rng = np.random.default_rng(7)
    losses = rng.uniform(0, 8, (4, 6))
    losses[:, 2] *= 8          # one row that needs many steps per segment
    durations = np.array([30.0, 300.0, 5.0, 90.0])
    together = ph.hot_network_rise(durations, losses, COPPER, -0.001, 2.0, 8.0, 12.0, 400.0, True)
    for i in range(losses.shape[1]):
        alone = ph.hot_network_rise(durations, losses[:, i:i + 1], COPPER, -0.001, 2.0, 8.0, 12.0, 400.0, True)
        assert alone.peak[0] == together.peak[i]


def test_a_large_batch_of_mixed_rows_gives_each_row_what_it_gets_alone():
    # Rows needing one step per segment and rows needing many, of several patterns (the solver groups
    # them onto shared grids of steps; a row's padding steps have zero duration), each equal to its
    # own solution to the last bit: batching is work, never a change of the result.
    rng = np.random.default_rng(23)
    durations = np.array([2.0, 40.0, 0.5, 300.0, 12.0])
    n = 120
    losses = rng.uniform(0.0, 4.0, (5, n)) * rng.choice([1.0, 2.0, 5.0], size=n)
    losses[rng.integers(0, 5, n), np.arange(n)] *= rng.choice([1.0, 5.0, 20.0], size=n)   # one hot segment
    friction = rng.uniform(0.0, 3.0, n)
    kwargs = dict(no_load_loss_start=np.outer(np.linspace(0, 1, 5), friction),
                  no_load_loss_end=np.outer(np.linspace(1, 0, 5), friction),
                  no_load_at_winding=rng.random(n) < 0.5)
    rth1, rth2, cw, ch = (rng.uniform(lo, hi, n) for lo, hi in ((0.5, 4.0), (2.0, 9.0), (1.0, 40.0), (20.0, 900.0)))
    together = ph.hot_network_rise(durations, losses, COPPER, -0.0012, rth1, rth2, cw, ch, True, **kwargs)
    assert np.any(together.runaway) and not np.all(together.runaway)
    for i in range(n):
        alone = ph.hot_network_rise(durations, losses[:, i:i + 1], COPPER, -0.0012, rth1[i], rth2[i], cw[i], ch[i],
                                    True, kwargs["no_load_loss_start"][:, i:i + 1], kwargs["no_load_loss_end"][:, i:i + 1],
                                    kwargs["no_load_at_winding"][i])
        assert alone.peak[0] == together.peak[i] or (np.isnan(alone.peak[0]) and np.isnan(together.peak[i]))
        assert np.array_equal(alone.segment_mean[:, 0], together.segment_mean[:, i], equal_nan=True)


@pytest.mark.parametrize("periodic", [True, False])
def test_without_a_magnet_coefficient_it_is_the_fixed_current_network(periodic):
    # Source: catalog/physics/transient.py, an independent closed form of the network with R(θ) at a
    # fixed current (b = 0: Kt does not move, so the current of a torque stays fixed).
    rng = np.random.default_rng(11)
    d = rng.uniform(1, 200, 5)
    current = rng.uniform(0, 3, 5)
    r1, r2, tw, tm = 2.5, 9.0, 30.0, 900.0
    exact = ph.periodic_winding_temperature if periodic else ph.transient_winding_temperature
    reference = exact(d, current, 1.0, r1, r2, tw, tm, 298.15, 298.15) - 298.15
    sol = ph.hot_network_rise(d, (current ** 2)[:, None], COPPER, 0.0, r1, r2, tw / r1, tm / r2, periodic)
    assert sol.peak[0] == pytest.approx(reference, abs=0.005)
