"""The two-node network under losses that ramp linearly within each segment, solved exactly.

A loss that does not depend on the winding temperature but ramps with the
speed (friction and iron losses, T_f·|ω|, on a speed ramp that keeps its
sign) drives the linear network of :mod:`catalog.physics.network` with an
input affine in time on each segment.  Each segment then has the exact
affine map of :mod:`catalog.physics.hot_network` with a zero copper loss
(θ(d) = E·θ(0) + F·u0 + G·u1), so the winding rise at every segment end is
exact, and so is its highest value inside a segment (a stationary point
found as in :func:`catalog.physics.hot_network.interior_peaks`).  The
network is linear: the rise scales with the loss, so one solution per motor
serves every gear ratio (the loss of a ratio n is n times that of the
motor's speed profile).

Sources: textbook chapter on heating and cooling of machines (two-node
network); linear ODE theory (matrix exponential, variation of constants).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .affine_steps import interior_peaks
from .hot_network import solve_linearised, step_grid

__all__ = ["RampRise", "network_ramp_rise"]


class RampRise(NamedTuple):
    """Result of :func:`network_ramp_rise`: ``ends`` [K] the winding rise at the cycle start and every
    segment end, shape (S + 1,) + batch; ``segment_top`` and ``segment_low`` [K] its highest and
    lowest value within each segment (ends included), shape (S,) + batch."""

    ends: np.ndarray
    segment_top: np.ndarray
    segment_low: np.ndarray


def network_ramp_rise(durations, loss_start, loss_end, thermal_resistance_winding_housing,
                      thermal_resistance_housing_ambient, winding_heat_capacity, housing_heat_capacity,
                      periodic=True, node="winding"):
    """Winding rise of the two-node network under a loss ramping linearly within each segment.

    Parameters
    ----------
    durations : ndarray
        Segment durations, shape (S,) [s].
    loss_start : ndarray
        Loss at each segment's start, shape (S,) + batch or (S,) [W].
    loss_end : ndarray
        Loss at each segment's end (linear in time between), same shapes [W].
    thermal_resistance_winding_housing : float or ndarray
        Rth1, shape batch [K/W].
    thermal_resistance_housing_ambient : float or ndarray
        Rth2 (with the mounting's cooling factor), shape batch [K/W].
    winding_heat_capacity : float or ndarray
        Cw, shape batch [J/K].
    housing_heat_capacity : float or ndarray
        Ch, shape batch [J/K].
    periodic : bool
        The profile repeats (periodic state) or runs once from ambient [-].
    node : str
        Where the loss enters: ``"winding"`` or ``"housing"`` [-].

    Returns
    -------
    RampRise
        ``ends`` (S + 1,) + batch, ``segment_top`` and ``segment_low`` (S,) + batch winding
        rises [K].

    Notes
    -----
    Relation: dθ/dt = M·θ + u0 + u1·t on each segment, solved exactly
    (matrix exponential and its integrals); periodic start from the composed
    cycle map; the highest (lowest) value within a segment at its ends or at
    the one stationary maximum (minimum) of θw inside it: the minima of θw are
    the maxima of −θ, which follows the same M with −u0, −u1.
    Validity: two-node lumped model, a loss independent of the temperatures
    and linear in time within each segment.

    References
    ----------
    Textbook chapter on heating and cooling of machines; linear ODE theory
    (matrix exponential, variation of constants).
    """
    d = np.asarray(durations, dtype=float)
    n_seg = len(d)
    r1, r2, cw, ch = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (
        thermal_resistance_winding_housing, thermal_resistance_housing_ambient, winding_heat_capacity,
        housing_heat_capacity)))
    batch = r1.shape
    r1, r2, cw, ch = (x.reshape(-1) for x in (r1, r2, cw, ch))
    n = r1.size
    p0, p1 = (np.broadcast_to(np.asarray(p, dtype=float).reshape(n_seg, -1), (n_seg, n))
              for p in (loss_start, loss_end))
    seg, h, t0 = step_grid(d, np.ones((n_seg, n), dtype=int))
    zero = np.zeros(n)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        out_w, out_h, _, lin = solve_linearised(d, np.zeros((n_seg, n)), zero, zero, p0, p1,
                                                np.full(n, node == "winding"), r1, r2, cw, ch, bool(periodic),
                                                seg, h, t0, np.zeros((n_seg, n)), np.zeros((n_seg, n)))
        top = np.fmax(np.fmax(out_w[:-1], out_w[1:]), interior_peaks(out_w, out_h, lin))
        steps, u0w, u0h, u1w, u1h = lin
        low = np.fmin(np.fmin(out_w[:-1], out_w[1:]),
                      -interior_peaks(-out_w, -out_h, (steps, -u0w, -u0h, -u1w, -u1h)))
    return RampRise(out_w.reshape((n_seg + 1,) + batch), top.reshape((n_seg,) + batch),
                    low.reshape((n_seg,) + batch))
