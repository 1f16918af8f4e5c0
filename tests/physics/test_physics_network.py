"""The two-node network under a loss profile (catalog/physics/network.py).

Sources of the references: the exact closed-form network of
catalog/physics/transient.py with a zero temperature coefficient (an
independent implementation: per-segment Putzer maps composed per candidate);
direct numerical integration of the network ODE with
scipy.integrate.solve_ivp (textbook chapter on heating and cooling of
machines: Cw·dθw/dt = P − (θw − θh)/Rth1, Ch·dθh/dt = (θw − θh)/Rth1 − θh/Rth2);
the steady state of the copper law solved in closed form
(catalog/physics/thermal.py, IEC 60028).
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from catalog import physics as ph

TA = 300.0


def random_case(seed, n=400, s=9):
    rng = np.random.default_rng(seed)
    d = rng.uniform(0.1, 40.0, s)
    params = (rng.uniform(0.3, 12, n), rng.uniform(1, 40, n), rng.uniform(1, 80, n), rng.uniform(60, 3000, n))
    loss = rng.uniform(0, 60, (n, s)) * (rng.random((n, s)) > 0.3)
    return d, params, loss


@pytest.mark.parametrize("periodic", [True, False])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_peak_rise_equals_the_exact_network_without_temperature_coefficient(periodic, seed):
    # Source: catalog/physics/transient.py (independent closed form) with α = 0 and the loss
    # written as I²·R with R = 1 Ω.
    d, (r1, r2, tw, tm), loss = random_case(seed)
    mine = ph.network_peak_rise(loss, ph.network_segment_maps(d, r1, r2, tw, tm, periodic))
    exact = ph.periodic_winding_temperature if periodic else ph.transient_winding_temperature
    ref = exact(d, np.sqrt(loss), 1.0, r1, r2, tw, tm, TA, TA, temperature_coefficient=0.0) - TA
    np.testing.assert_allclose(mine, ref, rtol=1e-9, atol=1e-9)


def test_the_peak_matches_a_simulation_even_with_a_maximum_inside_a_segment():
    # Source: solve_ivp of the network ODE, sampled densely.  A long heavy load heats the housing,
    # a short pause cools the winding, a medium load then lifts the winding quickly while the
    # housing cools: the winding has a maximum inside that segment, which (as the module notes
    # prove) stays below the peak at a segment end.
    d = np.array([400.0, 8.0, 60.0, 300.0])
    loss = np.array([40.0, 0.0, 14.0, 0.0])
    r1, r2, tw, tm = 4.0, 3.0, 5.0, 400.0
    cw, ch = tw / r1, tm / r2

    def rhs(_, y, p):
        return [(p - (y[0] - y[1]) / r1) / cw, ((y[0] - y[1]) / r1 - y[1] / r2) / ch]

    y = np.zeros(2)
    for _cycle in range(60):  # repeated until periodic
        top, inside = 0.0, []
        for dk, p in zip(d, loss):
            sol = solve_ivp(rhs, (0, dk), y, args=(p,), rtol=1e-11, atol=1e-11, dense_output=True)
            w = sol.sol(np.linspace(0, dk, 4001))[0]
            top = max(top, float(w.max()))
            inside.append(w.max() - max(w[0], w[-1]))
            y = sol.y[:, -1]
    assert inside[2] > 0.05                # a real maximum inside the third segment
    maps = ph.network_segment_maps(d, r1, r2, tw, tm)
    assert ph.network_peak_rise(loss[None, :], maps)[0] == pytest.approx(top, abs=2e-4)


def test_a_grid_of_ratios_broadcasts_against_per_motor_maps():
    # Source: numpy broadcasting; per-motor maps (M, 1, S) against losses (M, R, S) equal
    # per-candidate maps.
    d, (r1, r2, tw, tm), loss = random_case(4, n=60)
    grid = ph.network_peak_rise(loss.reshape(6, 10, -1),
                                ph.NetworkMaps(*(a[:, None] if a.ndim > 1 else a for a in
                                                 ph.network_segment_maps(d, r1[::10], r2[::10], tw[::10],
                                                                         tm[::10]))))
    flat = ph.network_peak_rise(loss, ph.network_segment_maps(d, np.repeat(r1[::10], 10), np.repeat(r2[::10], 10),
                                                              np.repeat(tw[::10], 10), np.repeat(tm[::10], 10)))
    np.testing.assert_allclose(grid.reshape(-1), flat, rtol=1e-12)


@pytest.mark.parametrize("periodic", [True, False])
@pytest.mark.parametrize("seed", [6, 7])
def test_the_response_matrix_gives_the_recurrence_and_the_exact_network(periodic, seed):
    # Source: catalog/physics/transient.py (independent closed form, α = 0) as in the first test;
    # the response matrix is the recurrence of network_peak_rise carried on the loss vector, so
    # the two agree to rounding, start and segment-end temperatures included.
    d, (r1, r2, tw, tm), loss = random_case(seed, n=60)
    sub = [np.asarray(p)[::10] for p in (r1, r2, tw, tm)]    # 6 networks, 10 loss profiles each
    grid_losses = np.moveaxis(loss.reshape(6, 10, -1), -1, 0)  # (S, M, R)
    response = ph.network_response(ph.network_segment_maps(d, *sub, periodic=periodic))
    assert response.shape == (6, len(d) + 1, len(d))
    grid = ph.network_peak_rise_grid(grid_losses, response).reshape(-1)
    flat_maps = ph.network_segment_maps(d, *(np.repeat(p, 10) for p in sub), periodic=periodic)
    np.testing.assert_allclose(grid, ph.network_peak_rise(loss, flat_maps), rtol=1e-12, atol=1e-12)
    exact = ph.periodic_winding_temperature if periodic else ph.transient_winding_temperature
    ref = exact(d, np.sqrt(loss), 1.0, *(np.repeat(p, 10) for p in sub), TA, TA, temperature_coefficient=0.0) - TA
    np.testing.assert_allclose(grid, ref, rtol=1e-9, atol=1e-9)
    # row 0 is the start: the periodic state equals the end of the cycle, one pass starts cold
    if periodic:
        np.testing.assert_allclose(response[:, 0, :], response[:, -1, :], rtol=1e-9, atol=1e-15)
    else:
        assert not response[:, 0, :].any()


def test_the_peak_scales_with_the_losses():
    # Source: linearity of the network ODE.
    d, (r1, r2, tw, tm), loss = random_case(5, n=50)
    maps = ph.network_segment_maps(d, r1, r2, tw, tm)
    np.testing.assert_allclose(ph.network_peak_rise(2.5 * loss, maps), 2.5 * ph.network_peak_rise(loss, maps),
                               rtol=1e-12)


def test_hot_rise_of_a_steady_load_equals_the_copper_law_steady_state():
    # Source: steady state of the copper law (catalog/physics/thermal.py, IEC 60028): with Kt
    # constant (b = 0) and a steady load, holding R at the peak temperature is exact.
    current, r_ref, rth, tref = 3.0, 2.0, 9.0, 298.15
    expected = ph.steady_winding_temperature(current, r_ref, 3.0, 6.0, TA, tref) - TA
    r_amb = ph.resistance_at_temperature(r_ref, TA, tref)
    slope = ph.resistance_at_temperature(r_ref, TA + 1.0, tref) - r_amb
    got = ph.hot_winding_rise(current ** 2 * r_amb * rth, slope / r_amb, 0.0)
    assert got == pytest.approx(expected, rel=1e-9)


def test_hot_rise_solves_its_equation_and_finds_runaway():
    # Source: the defining equation y = θ·(1 + a·y)/(1 + b·y)², checked directly; runaway where
    # a dense scan of G(y) = s(y)·θ − y over 0 < y < −1/b finds no sign change.
    cold = np.linspace(1.0, 140.0, 300)
    a, b = 0.0037, -0.0011
    y = ph.hot_winding_rise(cold, a, b)
    finite = np.isfinite(y)
    s = (1 + a * y[finite]) / (1 + b * y[finite]) ** 2
    np.testing.assert_allclose(y[finite], s * cold[finite], rtol=1e-7)
    scan = np.linspace(0, -1 / b * 0.999, 200_001)
    for theta, got in zip(cold, y):
        g = theta * (1 + a * scan) / (1 + b * scan) ** 2 - scan
        root = scan[np.argmax(g <= 0)] if (g <= 0).any() else np.inf
        if np.isinf(root):
            assert np.isinf(got)
        else:
            assert got == pytest.approx(root, abs=2 * (scan[1] - scan[0]))
    assert finite.any() and not finite.all()
    assert ph.hot_winding_rise(0.0, a, b) == 0.0 and np.isnan(ph.hot_winding_rise(np.nan, a, b))


def test_capacity_maps_equal_the_time_constant_maps():
    # Source: the datasheet approximation Cw = τw/Rth1, Ch = τ_motor/Rth2 (catalog/physics/thermal.py):
    # the same network stated by its capacities.
    d, (r1, r2, tw, tm), loss = random_case(4)
    for periodic in (True, False):
        a = ph.network_segment_maps(d, r1, r2, tw, tm, periodic)
        b = ph.network_capacity_maps(d, r1, r2, tw / r1, tm / r2, periodic)
        for x, y in zip(a, b):
            np.testing.assert_allclose(x, y, rtol=1e-13, atol=1e-15)


@pytest.mark.parametrize("periodic", [True, False])
def test_a_loss_at_the_housing_node_matches_a_simulation(periodic):
    # Source: solve_ivp of Cw·dθw/dt = −(θw − θh)/Rth1, Ch·dθh/dt = (θw − θh)/Rth1 − θh/Rth2 + P_h
    # (textbook two-node network with the loss entering the housing), repeated until periodic.
    d = np.array([30.0, 5.0, 120.0])
    loss = np.array([6.0, 0.0, 2.5])
    r1, r2, cw, ch = 3.0, 8.0, 4.0, 60.0

    def rhs(_, y, p):
        return [-(y[0] - y[1]) / r1 / cw, ((y[0] - y[1]) / r1 - y[1] / r2 + p) / ch]

    y = np.zeros(2)
    for _cycle in range(400 if periodic else 1):
        start, ends = y.copy(), [y[0]]
        for dk, p in zip(d, loss):
            sol = solve_ivp(rhs, (0, dk), y, args=(p,), rtol=1e-11, atol=1e-11, max_step=dk / 50)
            y = sol.y[:, -1]
            ends.append(y[0])
        if periodic and np.max(np.abs(y - start)) < 1e-9:
            break
    # the winding at the cycle start and at every segment end (a housing loss can put the winding's
    # peak inside a segment: the winding lags the housing, so only the segment ends are compared)
    response = ph.network_response(ph.network_capacity_maps(d, r1, r2, cw, ch, periodic, node="housing"))
    np.testing.assert_allclose(response @ loss, ends, atol=1e-6)
    with pytest.raises(ValueError, match="node"):
        ph.network_capacity_maps(d, r1, r2, cw, ch, periodic, node="rotor")


@pytest.mark.parametrize("periodic", [True, False])
def test_the_rise_path_is_the_response_matrix_times_the_losses(periodic):
    # Source: network_response (checked above against the closed-form network and solve_ivp): the
    # path sweeps the same recurrence on the state, so both agree to rounding, for per-row losses
    # (S, batch) and for one profile every row shares (S,), at the winding and the housing node.
    d, (r1, r2, tw, tm), loss = random_case(5, n=40)
    cw, ch = tw / r1, tm / r2
    for node in ("winding", "housing"):
        maps = ph.network_capacity_maps(d, r1, r2, cw, ch, periodic=periodic, node=node)
        response = ph.network_response(maps)                      # (n, S + 1, S)
        path = ph.network_rise_path(loss.T, maps)                 # (S + 1, n)
        np.testing.assert_allclose(path, np.einsum("nks,ns->kn", response, loss), rtol=1e-10, atol=1e-10)
        shared = ph.network_rise_path(loss[0], maps)              # one profile for every row
        np.testing.assert_allclose(shared, (response @ loss[0]).T, rtol=1e-10, atol=1e-10)
    winding = ph.network_capacity_maps(d, r1, r2, cw, ch, periodic=periodic)
    np.testing.assert_allclose(ph.network_rise_path(loss.T, winding).max(axis=0), ph.network_peak_rise(loss, winding),
                               rtol=1e-12, atol=1e-12)
