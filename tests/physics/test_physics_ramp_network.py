"""The two-node network under a loss ramping within each segment, against an independent integration.

Reference: scipy.integrate.solve_ivp (Radau, tight tolerances) of the network's two equations
Cw·dθw/dt = Pw − (θw − θh)/Rth1, Ch·dθh/dt = Ph + (θw − θh)/Rth1 − θh/Rth2 (textbook two-node
model of heating and cooling of machines), the loss linear in time within each segment; the periodic
state found by shooting (the cycle map is affine: its fixed point from three integrations).
The highest and lowest winding rise of each segment are read from a dense sampling that includes the
segment ends.
"""
import numpy as np
import pytest
from scipy.integrate import solve_ivp

from catalog.physics import network_ramp_rise

DURATIONS = np.array([1.0, 2.0, 0.5, 3.0, 4.0])
START = np.array([0.0, 20.0, 40.0, 60.0, 0.0])     # loss at each segment's start [W]
END = np.array([20.0, 40.0, 60.0, 0.0, 0.0])        # and at its end [W]
RTH1, RTH2, CW, CH = 2.0, 5.0, 3.0, 60.0


def _reference(node, periodic):
    edges = np.r_[0.0, np.cumsum(DURATIONS)]

    def loss(t):
        k = min(np.searchsorted(edges, t, side="right") - 1, len(DURATIONS) - 1)
        return START[k] + (END[k] - START[k]) * (t - edges[k]) / DURATIONS[k]

    def rhs(t, x):
        p = loss(t)
        pw, ph = (p, 0.0) if node == "winding" else (0.0, p)
        return [(pw - (x[0] - x[1]) / RTH1) / CW, (ph + (x[0] - x[1]) / RTH1 - x[1] / RTH2) / CH]

    def run(x0):
        return solve_ivp(rhs, (0.0, edges[-1]), x0, method="Radau", rtol=1e-10, atol=1e-12, max_step=0.01,
                         dense_output=True)

    x0 = np.zeros(2)
    if periodic:    # the cycle map is affine, x -> Φ·x + c: its fixed point from three integrations
        c = run(x0).y[:, -1]
        phi = np.column_stack([run(e).y[:, -1] - c for e in np.eye(2)])
        x0 = np.linalg.solve(np.eye(2) - phi, c)
    sol = run(x0)
    t = np.unique(np.r_[np.linspace(0.0, edges[-1], 100001), edges])
    w = sol.sol(t)[0]
    inside = [(t >= lo) & (t <= hi) for lo, hi in zip(edges[:-1], edges[1:])]
    return sol.sol(edges)[0], np.array([w[m].max() for m in inside]), np.array([w[m].min() for m in inside])


@pytest.mark.parametrize("node", ["winding", "housing"])
@pytest.mark.parametrize("periodic", [True, False])
def test_ramp_rise_matches_an_integration_of_the_network(node, periodic):
    ends, top, low = _reference(node, periodic)
    got = network_ramp_rise(DURATIONS, START, END, RTH1, RTH2, CW, CH, periodic=periodic, node=node)
    np.testing.assert_allclose(got.ends, ends, atol=2e-5)
    np.testing.assert_allclose(got.segment_top, top, atol=2e-5)
    np.testing.assert_allclose(got.segment_low, low, atol=2e-5)
    if node == "winding" and periodic:
        # the case has a winding that still rises after its loss starts falling, and one that still
        # falls after its loss starts rising: extremes inside segments, above and below both ends
        assert np.any(got.segment_top > np.fmax(got.ends[:-1], got.ends[1:]) + 0.1)
        assert np.any(got.segment_low < np.fmin(got.ends[:-1], got.ends[1:]) - 0.1)


def test_ramp_rise_scales_with_the_loss_and_broadcasts_over_motors():
    # the network is linear: twice the loss gives twice the rise; a batch of motors gives each its own
    rth1 = np.array([RTH1, 1.0, 4.0])
    one = network_ramp_rise(DURATIONS, START, END, rth1, RTH2, CW, CH)
    two = network_ramp_rise(DURATIONS, 2 * START, 2 * END, rth1, RTH2, CW, CH)
    np.testing.assert_allclose(two.ends, 2 * one.ends, rtol=1e-12)
    assert one.ends.shape == (len(DURATIONS) + 1, 3) and one.segment_top.shape == (len(DURATIONS), 3)
    alone = network_ramp_rise(DURATIONS, START, END, 4.0, RTH2, CW, CH)
    np.testing.assert_allclose(one.ends[:, 2], alone.ends, rtol=1e-12)
