"""The two-node network with the losses following the winding temperature, solved exactly.

With the copper resistance R(θ) = R_a·(1 + a·θ) and the torque constant
Kt(θ) = Kt_a·(1 + b·θ) (θ the winding rise above ambient, a > 0 copper, b ≤ 0
the magnet) the copper loss of a segment at constant torque T is
P = c·s(θ), c = T²·R_a/Kt_a², s(θ) = (1 + a·θ)/(1 + b·θ)².  Within a step on
which s is replaced by its tangent s(θ̄) + s'(θ̄)·(θ − θ̄) the loss is affine
in the winding temperature, so the network (see :mod:`catalog.physics.network`)
stays linear and time-invariant,

    dθ/dt = M·θ + u0 + u1·t,   M = [[(c·s'(θ̄) − 1/Rth1)/Cw, 1/(Rth1·Cw)],
                                    [1/(Rth1·Ch), −(1/Rth1 + 1/Rth2)/Ch]],

with u0, u1 the constant part of the copper loss and a loss that ramps
linearly in time (friction and iron losses of a speed ramp, at the winding or
the housing node).  Each step is then solved exactly: θ(h) = E(h)·θ(0) +
F(h)·u0 + G(h)·u1 with E = e^{Mh} (Putzer: M has real distinct eigenvalues,
its off-diagonal product being positive), F = ∫E, G = ∫(h − τ)·E(τ)dτ, and
∫θ dt = F·θ(0) + G·u0 + H·u1 with H = ∫(h − τ)²/2·E(τ)dτ.

The tangent points are the midpoints of each step's winding temperatures of
the previous iterate (Newton's method on the trajectory); a segment whose
winding moves more than a few kelvin is cut into equal steps so that the
tangent's error, at most s''·(range/2)²/2 of the loss, stays within
:data:`_STEP_ERROR` of the result (the tangent lies below s, so the result
reads low by at most that: a few thousandths of a kelvin).  A repeated cycle is solved for its
periodic state as the fixed point of the composed affine cycle map; one pass
starts at ambient.  The winding's largest value is at a step boundary or at a
stationary point inside a step (found by bisection on dθw/dt, which has one
sign change there).

Runaway: every tangent of the convex s lies below it, so the true losses
are at least the linearised ones; a linearised cycle map whose spectral
radius reaches 1, a winding rise beyond the point where Kt vanishes, or no
convergence, mean the true network has no periodic state either.

Sources: textbook chapter on heating and cooling of machines (two-node
network); linear ODE theory (matrix exponential, Putzer; variation of
constants); IEC 60028 (copper law); IEC 60404-8-1 (reversible coefficient of
the remanence); Newton's method.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .affine_steps import Steps, interior_peaks
from .step_groups import step_groups

__all__ = ["HotNetworkSolution", "hot_network_rise"]

_MAX_ITERATIONS = 40
_STEP_ERROR = 2e-3          # [K] allowed tangent error per result (the tangent lies below: results read low by up to this)
_MAX_STEPS = 64             # steps per segment at most
_LARGEST_RISE = 5000.0      # [K] beyond this (or where Kt vanishes) the winding runs away


class HotNetworkSolution(NamedTuple):
    """Result of :func:`hot_network_rise` (batch arrays).

    ``peak`` [K]: highest winding rise over the cycle (inf at runaway);
    ``runaway`` [-]; ``segment_mean`` [K]: time-mean winding rise of every
    segment, shape (S,) + batch; ``iterations`` [-]: Newton iterations used.
    """

    peak: np.ndarray
    runaway: np.ndarray
    segment_mean: np.ndarray
    iterations: np.ndarray


def _loss_shape(a, b, theta):
    """s(θ) = (1 + a·θ)/(1 + b·θ)², s'(θ), s''(θ) [1, 1/K, 1/K²]."""
    k = 1.0 + b * theta
    g = 1.0 + a * theta
    s = g / (k * k)
    ds = a / (k * k) - 2.0 * b * g / (k * k * k)
    dds = -4.0 * a * b / (k * k * k) + 6.0 * b * b * g / (k * k * k * k)
    return s, ds, dds


def step_grid(durations, steps):
    """Per step: (segment index, step duration (J, N), start time within its segment (J, N))."""
    seg = np.repeat(np.arange(len(durations)), steps.max(axis=1))
    q = np.concatenate([np.arange(m) for m in steps.max(axis=1)])[:, None]      # index within its segment
    live = q < steps[seg]
    h = np.where(live, durations[seg][:, None] / steps[seg], 0.0)
    return seg, h, np.where(live, q * h, durations[seg][:, None])


def solve_linearised(d, c, a, b, p0, p1, at_winding, r1, r2, cw, ch, periodic, seg, h, t0, ref_start, ref_end):
    """One Newton step: the trajectory of the network linearised at the midpoints of (ref_start, ref_end).

    Returns (winding and housing rise at the J + 1 step boundaries, runaway flag, steps).
    """
    mid = 0.5 * (ref_start + ref_end)
    s, ds, _ = _loss_shape(a, b, mid)
    cj = c[seg]
    slope = (p1 - p0)[seg] / np.where(d[seg][:, None] > 0, d[seg][:, None], 1.0)
    nl0 = p0[seg] + slope * t0
    m11 = (cj * ds - 1.0 / r1) / cw
    steps = Steps(m11, 1.0 / (r1 * cw), 1.0 / (r1 * ch), -(1.0 / r1 + 1.0 / r2) / ch, h)
    u0w = (cj * (s - ds * mid) + np.where(at_winding, nl0, 0.0)) / cw
    u0h = np.where(at_winding, 0.0, nl0) / ch
    u1w, u1h = np.where(at_winding, slope, 0.0) / cw, np.where(at_winding, 0.0, slope) / ch
    e11, e12, e21, e22 = steps.matrices(0)
    bw, bh = steps.apply(u0w, u0h, 1)
    if np.any(u1w) or np.any(u1h):                      # a loss ramping within its segment
        gw, gh = steps.apply(u1w, u1h, 2)
        bw, bh = bw + gw, bh + gh
    n_steps = len(seg)
    xw, xh = np.zeros_like(a), np.zeros_like(a)
    runaway = np.zeros(a.shape, dtype=bool)
    if periodic:
        a11, a12, a21, a22 = np.ones_like(a), np.zeros_like(a), np.zeros_like(a), np.ones_like(a)
        cw_, ch_ = np.zeros_like(a), np.zeros_like(a)
        for j in range(n_steps):
            a11, a12, a21, a22 = (e11[j] * a11 + e12[j] * a21, e11[j] * a12 + e12[j] * a22,
                                  e21[j] * a11 + e22[j] * a21, e21[j] * a12 + e22[j] * a22)
            cw_, ch_ = e11[j] * cw_ + e12[j] * ch_ + bw[j], e21[j] * cw_ + e22[j] * ch_ + bh[j]
        half_trace = 0.5 * (a11 + a22)
        radius = half_trace + np.sqrt(np.maximum(half_trace ** 2 - (a11 * a22 - a12 * a21), 0.0))
        det = (1.0 - a11) * (1.0 - a22) - a12 * a21
        with np.errstate(divide="ignore", invalid="ignore"):
            xw = ((1.0 - a22) * cw_ + a12 * ch_) / det
            xh = (a21 * cw_ + (1.0 - a11) * ch_) / det
        runaway = ~(radius < 1.0) | ~np.isfinite(xw)
    out_w, out_h = np.empty((n_steps + 1,) + a.shape), np.empty((n_steps + 1,) + a.shape)
    out_w[0], out_h[0] = xw, xh
    for j in range(n_steps):
        xw, xh = e11[j] * xw + e12[j] * xh + bw[j], e21[j] * xw + e22[j] * xh + bh[j]
        out_w[j + 1], out_h[j + 1] = xw, xh
    return out_w, out_h, runaway, (steps, u0w, u0h, u1w, u1h)


def _step_counts(d, out_w, seg_end, a, b, peak):

    """Steps per segment for each row: the winding's range in the segment over the range the tangent's
    error allows (s''·(range/2)²/2·peak/s ≤ the allowed error)."""
    counts = []
    start = 0
    for k in range(len(d)):
        stop = seg_end[k]
        part = out_w[start:stop + 1]
        spread = part.max(axis=0) - part.min(axis=0)
        top = np.where(np.isfinite(peak), np.maximum(peak, 0.0), 0.0)
        s, _, dds = _loss_shape(a, b, top)
        allowed = np.sqrt(8.0 * _STEP_ERROR * s / np.maximum(dds * np.maximum(top, 1e-9), 1e-300))
        counts.append(np.clip(np.ceil(spread / allowed), 1, _MAX_STEPS))
        start = stop
    return np.nan_to_num(np.array(counts), nan=1.0).astype(int)


def _finish(rows, steps, coarse_w, wild, run, d, c, a, b, p0, p1, at_w, r1, r2, cw, ch, periodic, cap,
            peak, runaway, mean):
    """Newton on the finer steps of ``rows`` (from their coarse trajectory), then the peak (with the
    maxima inside steps), runaway and the segment means, written into ``peak``/``runaway``/``mean``."""
    seg, h, t0 = step_grid(d, steps)
    w = np.empty((len(seg) + 1, rows.size))          # the coarse trajectory, linearly in time, on the steps
    w[0] = coarse_w[0]
    for j, k in enumerate(seg):
        frac = (t0[j] + h[j]) / d[k] if d[k] > 0 else np.ones(rows.size)
        w[j + 1] = coarse_w[k] + frac * (coarse_w[k + 1] - coarse_w[k])
    if np.any(steps > 1):
        w, more_wild = run(rows, (seg, h, t0), w)
        wild = wild | more_wild
    # the converged linearisation once more, for the interior maxima and the segment means
    out_w, out_h, lost, lin = solve_linearised(d, c[:, rows], a[rows], b[rows], p0[:, rows], p1[:, rows],
                                               at_w[rows], r1[rows], r2[rows], cw[rows], ch[rows], periodic, seg,
                                               h, t0, w[:-1], w[1:])
    top = np.maximum(out_w.max(axis=0), interior_peaks(out_w, out_h, lin).max(axis=0))
    bad = wild | (lost & periodic) | ~np.isfinite(top) | (top >= cap[rows])
    peak[rows] = np.where(bad, np.inf, top)
    runaway[rows] = bad
    # time-mean winding rise per segment: Σ over its steps of ∫θw = F·θ(0) + G·u0 + H·u1
    steps_, u0w, u0h, u1w, u1h = lin
    integral = (steps_.apply(out_w[:-1], out_h[:-1], 1)[0] + steps_.apply(u0w, u0h, 2)[0]
                + steps_.apply(u1w, u1h, 3)[0])
    per_segment = np.zeros((len(d), rows.size))
    np.add.at(per_segment, seg, integral)
    mean[:, rows] = np.where(bad, np.inf, per_segment / d[:, None])


def hot_network_rise(durations, copper_loss, resistance_rise_coefficient, torque_constant_rise_coefficient,
                     thermal_resistance_winding_housing, thermal_resistance_housing_ambient,
                     winding_heat_capacity, housing_heat_capacity, periodic=True, no_load_loss_start=0.0,
                     no_load_loss_end=0.0, no_load_at_winding=False, start_rise=0.0, tolerance=1e-3):
    """Winding rise of the two-node network with resistance and torque constant following the winding.

    Parameters
    ----------
    durations : ndarray
        Segment durations, shape (S,) [s].
    copper_loss : ndarray
        Copper loss with R and Kt at ambient, T²·R_a/Kt_a², shape (S,) + batch [W].
    resistance_rise_coefficient : float or ndarray
        a = (dR/dT)/R(Ta), shape batch [1/K].
    torque_constant_rise_coefficient : float or ndarray
        b = (dKt/dT)/Kt(Ta), ≤ 0, shape batch [1/K].
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
    no_load_loss_start : float or ndarray
        Loss independent of the winding temperature at each segment's start
        (friction, iron), shape (S,) + batch or broadcastable [W].
    no_load_loss_end : float or ndarray
        The same at each segment's end; it ramps linearly between [W].
    no_load_at_winding : bool or ndarray
        Where that loss enters: the winding node (True) or the housing [-].
    start_rise : float or ndarray
        Winding rise at which the first tangents are taken: one per row
        (shape batch) or a guess of the rise at the cycle start and at every
        segment end (shape (S + 1,) + batch); a guess near the solution saves
        iterations [K].
    tolerance : float
        Newton iterations stop for a row when its winding temperatures move
        less than this [K].

    Returns
    -------
    HotNetworkSolution
        ``peak`` and ``segment_mean`` rises [K], ``runaway`` [-],
        ``iterations`` [-].

    Notes
    -----
    Relation: dθ/dt = M(θ̄)·θ + u exact per step (module notes); losses
    P = c·(1 + a·θw)/(1 + b·θw)² + P_nl(t).  Each row is iterated on its own
    (a converged row is left alone), so its result does not depend on the
    other rows of the batch.
    Validity: two-node lumped model, linear R(T) and Kt(T), 1 + b·θ > 0.

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60028; IEC
    60404-8-1; linear ODE theory (matrix exponential).
    """
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):   # a runaway row overflows
        return _hot_network_rise(durations, copper_loss, resistance_rise_coefficient,
                                 torque_constant_rise_coefficient, thermal_resistance_winding_housing,
                                 thermal_resistance_housing_ambient, winding_heat_capacity, housing_heat_capacity,
                                 periodic, no_load_loss_start, no_load_loss_end, no_load_at_winding, start_rise,
                                 tolerance)


def _hot_network_rise(durations, copper_loss, resistance_rise_coefficient, torque_constant_rise_coefficient,
                      thermal_resistance_winding_housing, thermal_resistance_housing_ambient,
                      winding_heat_capacity, housing_heat_capacity, periodic, no_load_loss_start,
                      no_load_loss_end, no_load_at_winding, start_rise, tolerance):
    d = np.asarray(durations, dtype=float)
    c = np.asarray(copper_loss, dtype=float)
    batch = c.shape[1:]
    n_seg = len(d)
    flat = (lambda x: np.broadcast_to(np.asarray(x, dtype=float), batch).reshape(-1).copy())
    flat_s = (lambda x: np.broadcast_to(np.asarray(x, dtype=float), (n_seg,) + batch).reshape(n_seg, -1).copy())
    c = c.reshape(n_seg, -1)
    a, b, r1, r2, cw, ch = (flat(x) for x in (
        resistance_rise_coefficient, torque_constant_rise_coefficient, thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient, winding_heat_capacity, housing_heat_capacity))
    start = np.asarray(start_rise, dtype=float)
    if start.ndim == len(batch) + 1 and start.shape[0] == n_seg + 1:     # a guess of the trajectory
        ref = start.reshape(n_seg + 1, -1)
    else:
        ref = np.broadcast_to(flat(start), (n_seg + 1, c.shape[1]))
    p0, p1 = flat_s(no_load_loss_start), flat_s(no_load_loss_end)
    at_w = np.broadcast_to(np.asarray(no_load_at_winding, dtype=bool), batch).reshape(-1).copy()
    n = c.shape[1]
    peak, runaway = np.full(n, np.nan), np.zeros(n, dtype=bool)
    mean = np.full((n_seg, n), np.nan)
    iterations = np.zeros(n, dtype=int)
    ref = np.where(np.isfinite(ref), np.maximum(ref, 0.0), 0.0)
    vanish = np.where(b < 0.0, -0.9 / np.where(b < 0.0, b, -1.0), np.inf)   # where Kt has lost 90 %
    cap = np.minimum(_LARGEST_RISE, vanish)

    def run(rows, grid, ref_w):
        """Newton on the rows ``rows`` over the steps ``grid`` (segment, durations (J, n), start times)
        from the boundary guesses ``ref_w`` (J + 1, n); each row stops when it has converged."""
        seg, h, t0 = grid
        todo = np.arange(len(rows))
        prev = ref_w.copy()
        wild = np.zeros(len(rows), dtype=bool)
        for _ in range(_MAX_ITERATIONS):
            sub = rows[todo]
            out_w, _, lost, _ = solve_linearised(d, c[:, sub], a[sub], b[sub], p0[:, sub], p1[:, sub],
                                                 at_w[sub], r1[sub], r2[sub], cw[sub], ch[sub], periodic, seg,
                                                 h[:, todo], t0[:, todo], prev[:-1, todo], prev[1:, todo])
            too_hot = lost | ~np.all(out_w < cap[sub], axis=0) | ~np.all(np.isfinite(out_w), axis=0)
            change = np.max(np.abs(out_w - prev[:, todo]), axis=0)
            finished = too_hot | (change <= tolerance)
            prev[:, todo] = np.where(too_hot, prev[:, todo], out_w)
            wild[todo] |= too_hot
            iterations[sub] += 1
            todo = todo[~finished]
            if not todo.size:
                break
        wild[todo] = True                                   # never converged: no consistent temperature
        return prev, wild

    rows = np.flatnonzero(np.all(np.isfinite(c), axis=0) & np.isfinite(a) & np.isfinite(b) & np.isfinite(r1)
                          & np.isfinite(r2) & np.isfinite(cw) & np.isfinite(ch))
    if not rows.size:
        return HotNetworkSolution(peak.reshape(batch), runaway.reshape(batch), mean.reshape((n_seg,) + batch),
                                  iterations.reshape(batch))
    # one step per segment first; then segments whose winding moves far are cut into steps (per row, so
    # that a row's result never depends on the others: a step of zero duration is an exact identity)
    coarse = step_grid(d, np.ones((n_seg, rows.size), dtype=int))
    coarse_w, wild = run(rows, coarse, ref[:, rows])
    steps = _step_counts(d, coarse_w, np.arange(1, n_seg + 1), a[rows], b[rows], coarse_w.max(axis=0))
    steps[:, wild] = 1
    # rows of alike step counts together (every row of a group takes the group's most steps per segment)
    for group in step_groups(steps):
        _finish(rows[group], steps[:, group], coarse_w[:, group], wild[group], run, d, c, a, b, p0, p1, at_w,
                r1, r2, cw, ch, periodic, cap, peak, runaway, mean)
    return HotNetworkSolution(peak.reshape(batch), runaway.reshape(batch), mean.reshape((n_seg,) + batch),
                              iterations.reshape(batch))
