"""The two-node thermal network driven by a loss profile, and the hot fixed point.

With the winding resistance and the torque constant held at one temperature,
the copper loss of a segment is a constant P_k and the network (see
:mod:`catalog.physics.thermal`) is linear and time-invariant ::

    dθ/dt = M·θ + (P/Cw, 0),  M = [[−1/(Rth1·Cw),  1/(Rth1·Cw)],
                                   [1/(Rth1·Ch),  −(1/Rth1 + 1/Rth2)/Ch]],

θ = (θw, θh) the rises of winding and housing above ambient.  Over a segment
of duration d the state moves by the affine map θ → E(d)·θ + h(d)·P with
E(d) = exp(M·d) (Putzer's formula: M has real, distinct, negative
eigenvalues) and h(d) = ∫ E dτ·(1/Cw, 0), which depend on the motor and the
segment durations only, never on the loss.  So the periodic cycle-start
state is a fixed linear combination of the segment losses,
θ0 = (I − E(period))⁻¹·Σ_k E(period − t_k)·h_k·P_k, and one sweep over the
segments gives every segment-end rise.  The peak of θw is always at a
segment boundary: at an interior stationary point θw = θh + P·Rth1 while
the housing cools (dθw/dt = 0 and d²θw/dt² ≤ 0 give dθh/dt ≤ 0, so P ≤
θh/Rth2), hence θw ≤ θh·(1 + Rth1/Rth2); at the housing's last maximum
before it, θh was at least as high and θw equalled θh·(1 + Rth1/Rth2)
exactly.  So the segment-end values give the exact peak of the model.

:func:`hot_winding_rise` closes the loop with the temperature dependence:
holding R and Kt at the peak winding temperature all cycle scales every loss
by s(y) = (1 + a·y)/(1 + b·y)² (y the peak rise), so the peak rise is the
smallest root of y = s(y)·θ_cold, where θ_cold is the peak rise with both at
ambient.  This is a conservative bound (the losses of the cooler part of the
cycle are overestimated: by a few per cent of the rise on a burst cycle, by
tens of per cent on a long overload from cold), exact for a steady state;
held at the coolest winding temperature instead it gives a bound from below.
:mod:`catalog.physics.hot_network` solves the network with R and Kt following
the winding exactly.

Sources: textbook chapter on heating and cooling of machines (two-node
network); linear ODE theory (matrix exponential, Putzer); IEC 60034-1 duty
types (periodic duty); IEC 60028 (copper law).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .broadcast import vectorised

__all__ = ["NetworkMaps", "network_segment_maps", "network_capacity_maps", "network_peak_rise", "network_rise_path",
           "network_response", "network_peak_rise_grid",
           "hot_winding_rise"]

NEWTON_STEPS = 60       # enough for the linear convergence at a double root
NEWTON_TOLERANCE = 1e-6  # [K]


class NetworkMaps(NamedTuple):
    """Per-watt affine maps of the network over each segment, arrays of shape batch + (S,).

    ``e11, e12, e21, e22`` [1]: E(d_k); ``hw, hh`` [K/W]: rise at the segment
    end per watt lost in it, from zero; ``qw, qh`` [K/W]: cycle-start rise per
    watt lost in segment k (zero for a single pass from cold); ``durations``
    (S,) [s].
    """

    e11: np.ndarray
    e12: np.ndarray
    e21: np.ndarray
    e22: np.ndarray
    hw: np.ndarray
    hh: np.ndarray
    qw: np.ndarray
    qh: np.ndarray
    durations: np.ndarray


def _expm1_over(z, t):
    """t·expm1(z)/z with its series near z = 0 (z = λ·t) [s]."""
    small = np.abs(z) < 1e-6
    safe = np.where(small, 1.0, z)
    return t * np.where(small, 1.0 + z * (0.5 + z / 6.0), np.expm1(safe) / safe)


def _flow(lam1, lam2, delta, t):
    """(e^{λ2 t}, (e^{λ1 t} − e^{λ2 t})/Δ, ∫e^{λ2}, ∫(e^{λ1} − e^{λ2})/Δ) over [0, t]."""
    em2 = np.expm1(lam2 * t)
    e2 = em2 + 1.0
    dd = delta * t
    p = np.where(dd < 1.0, e2 * np.expm1(np.minimum(dd, 1.0)), np.exp(lam1 * t) - e2) / delta
    h2 = _expm1_over(lam2 * t, t)
    h1 = _expm1_over(lam1 * t, t)
    return e2, p, h2, (h1 - h2) / delta


def network_segment_maps(durations, thermal_resistance_winding_housing,
                         thermal_resistance_housing_ambient, thermal_time_constant_winding,
                         thermal_time_constant_motor, periodic=True):
    """Per-watt maps of the two-node network over each segment of a profile.

    Parameters
    ----------
    durations : ndarray
        Segment durations, shape (S,) [s].
    thermal_resistance_winding_housing : float or ndarray
        Thermal resistance winding to housing Rth1, shape batch [K/W].
    thermal_resistance_housing_ambient : float or ndarray
        Thermal resistance housing to ambient Rth2, shape batch [K/W].
    thermal_time_constant_winding : float or ndarray
        Winding thermal time constant τw (Cw = τw/Rth1), shape batch [s].
    thermal_time_constant_motor : float or ndarray
        Motor thermal time constant τ_motor (Ch = τ_motor/Rth2), shape batch [s].
    periodic : bool
        True: the profile repeats and the cycle starts in its periodic state;
        False: one pass from ambient [-].

    Returns
    -------
    NetworkMaps
        Arrays of shape batch + (S,) (see :class:`NetworkMaps`) [K/W].

    Notes
    -----
    Relation: E(d) = e^{λ2 d}·I + (e^{λ1 d} − e^{λ2 d})/Δ·(M − λ2·I), h =
    ∫E dτ·(1/Cw, 0); periodic start (I − E(period))⁻¹·Σ E(period − t_k)·h_k.
    Validity: two-node lumped model, loss constant within a segment.

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60034-1.
    """
    rth1, rth2, tau_w, tau_m = (np.asarray(p, dtype=float) for p in (
        thermal_resistance_winding_housing, thermal_resistance_housing_ambient,
        thermal_time_constant_winding, thermal_time_constant_motor))
    return network_capacity_maps(durations, rth1, rth2, tau_w / rth1, tau_m / rth2, periodic=periodic)


def network_capacity_maps(durations, thermal_resistance_winding_housing, thermal_resistance_housing_ambient,
                          winding_heat_capacity, housing_heat_capacity, periodic=True, node="winding"):
    """Per-watt maps of the two-node network over each segment, from its resistances and capacities.

    Parameters
    ----------
    durations : ndarray
        Segment durations, shape (S,) [s].
    thermal_resistance_winding_housing : float or ndarray
        Thermal resistance winding to housing Rth1, shape batch [K/W].
    thermal_resistance_housing_ambient : float or ndarray
        Thermal resistance housing to ambient Rth2, shape batch [K/W].
    winding_heat_capacity : float or ndarray
        Heat capacity of the winding node Cw, shape batch [J/K].
    housing_heat_capacity : float or ndarray
        Heat capacity of the housing node Ch, shape batch [J/K].
    periodic : bool
        True: the profile repeats and the cycle starts in its periodic state;
        False: one pass from ambient [-].
    node : str
        Where the loss enters: ``"winding"`` (copper) or ``"housing"`` [-].

    Returns
    -------
    NetworkMaps
        Arrays of shape batch + (S,); ``hw``/``hh`` and ``qw``/``qh`` per watt
        lost at ``node`` [K/W].

    Notes
    -----
    Relation: as :func:`network_segment_maps`, with h = ∫E dτ·(1/Cw, 0) for a
    winding loss and ∫E dτ·(0, 1/Ch) for a housing loss.  The capacities are
    the motor's own: a mounting that cools the housing better or worse
    changes Rth2 but not Ch, so the housing time constant Rth2·Ch changes
    with it (which :func:`network_segment_maps`, deriving Ch from τ_motor and
    the Rth2 it is given, cannot express).
    Validity: two-node lumped model, loss constant within a segment.

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60034-1.
    """
    if node not in ("winding", "housing"):
        raise ValueError(f"node must be 'winding' or 'housing', got {node!r}")
    d = np.asarray(durations, dtype=float)
    if d.ndim != 1 or np.any(d < 0.0):
        raise ValueError("durations must be a 1-d array of non-negative segment durations")
    rth1, rth2, cw, ch = (np.asarray(p, dtype=float)[..., None] for p in (
        thermal_resistance_winding_housing, thermal_resistance_housing_ambient,
        winding_heat_capacity, housing_heat_capacity))
    m11, m12 = -1.0 / (rth1 * cw), 1.0 / (rth1 * cw)
    m21, m22 = 1.0 / (rth1 * ch), -(1.0 / rth1 + 1.0 / rth2) / ch
    half = (m11 - m22) * 0.5
    s = np.sqrt(half * half + m12 * m21)
    lam2 = (m11 + m22) * 0.5 - s
    lam1 = (1.0 / (rth1 * rth2 * cw * ch)) / lam2       # det(M)/λ2: accurate near 0
    delta = 2.0 * s
    k11, k22 = m11 - lam2, m22 - lam2
    at_winding = node == "winding"

    def transition(t):
        e2, p, h2, phi = _flow(lam1, lam2, delta, t)
        if at_winding:     # ∫E dτ·(1/Cw, 0)
            hw_, hh_ = (h2 + phi * k11) / cw, phi * m21 / cw
        else:              # ∫E dτ·(0, 1/Ch)
            hw_, hh_ = phi * m12 / ch, (h2 + phi * k22) / ch
        return (e2 + p * k11, p * m12, p * m21, e2 + p * k22, hw_, hh_)

    e11, e12, e21, e22, hw, hh = transition(d)
    if periodic:
        ends = np.cumsum(d)
        period = ends[-1]
        if period <= 0.0:
            raise ValueError("a periodic profile needs a positive cycle duration")
        f11, f12, f21, f22, _, _ = transition(np.asarray(period))
        g11, g12, g21, g22, _, _ = transition(period - ends)   # segment end -> cycle end
        vw, vh = g11 * hw + g12 * hh, g21 * hw + g22 * hh
        det = (1.0 - f11) * (1.0 - f22) - f12 * f21
        qw = ((1.0 - f22) * vw + f12 * vh) / det
        qh = (f21 * vw + (1.0 - f11) * vh) / det
    else:
        qw = qh = np.zeros_like(hw)
    return NetworkMaps(e11, e12, e21, e22, hw, hh, qw, qh, d)


def network_peak_rise(losses, maps, segments_first=False):
    """Peak winding rise of the two-node network under a profile of constant segment losses.

    Parameters
    ----------
    losses : ndarray
        Loss in the winding per segment, shape batch + (S,), or (S,) + batch
        with ``segments_first`` [W].
    maps : NetworkMaps
        From :func:`network_segment_maps`, batch broadcastable to the batch of
        ``losses`` [K/W].
    segments_first : bool
        The segment axis of ``losses`` comes first (each segment's losses then
        lie together in memory: the faster layout for large batches) [-].

    Returns
    -------
    ndarray
        Highest θw over the cycle (periodic maps) or the pass from ambient,
        shape batch [K].

    Notes
    -----
    Relation: θ_{k+1} = E_k·θ_k + h_k·P_k from θ_0 = Σ q_k·P_k; the peak is the
    largest segment-end value (never inside a segment, see the module notes).
    Validity: as :func:`network_segment_maps`; the network is linear, so the
    result scales with the losses.

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60034-1.
    """
    loss = np.asarray(losses, dtype=float)
    if not segments_first:
        loss = np.moveaxis(loss, -1, 0)
    batch = loss.shape[1:]
    def start(q):
        if loss.ndim == 3 and q.ndim == 3 and q.shape[1] == 1:   # per-motor maps over a grid: batched product
            return np.matmul(q, np.moveaxis(loss, 0, 1))[:, 0, :].copy()
        return np.broadcast_to(np.einsum("k...,...k->...", loss, q), batch).copy()

    xw, xh = start(maps.qw), start(maps.qh)
    peak = xw.copy()
    nw, nh, tmp = np.empty(batch), np.empty(batch), np.empty(batch)
    for k in range(loss.shape[0]):
        p = loss[k]
        e11, e12, e21, e22 = maps.e11[..., k], maps.e12[..., k], maps.e21[..., k], maps.e22[..., k]
        np.multiply(e11, xw, out=nw)
        nw += np.multiply(e12, xh, out=tmp)
        nw += np.multiply(maps.hw[..., k], p, out=tmp)
        np.multiply(e21, xw, out=nh)
        nh += np.multiply(e22, xh, out=tmp)
        nh += np.multiply(maps.hh[..., k], p, out=tmp)
        xw, nw, xh, nh = nw, xw, nh, xh
        np.maximum(peak, xw, out=peak)
    return peak


def network_rise_path(losses, maps):
    """Winding rise of the two-node network at the cycle start and at every segment end.

    Parameters
    ----------
    losses : ndarray
        Loss per segment, shape (S,) + batch, or (S,) for a profile every row shares [W].
    maps : NetworkMaps
        From :func:`network_capacity_maps` (per watt at the node the loss enters), arrays of
        shape batch + (S,) [K/W].

    Returns
    -------
    ndarray
        θw at the start (row 0) and at the end of segment k (row k), shape (S + 1,) + batch [K].

    Notes
    -----
    Relation: the recurrence of :func:`network_peak_rise`, every segment end kept: the same
    numbers as :func:`network_response` times the losses, in O(S) instead of O(S²) per row.
    Validity: as :func:`network_capacity_maps`.

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60034-1.
    """
    loss = np.asarray(losses, dtype=float)
    n_seg = maps.e11.shape[-1]
    batch = np.broadcast_shapes(maps.e11.shape[:-1], loss.shape[1:])
    if loss.ndim == 1:
        loss = loss.reshape((n_seg,) + (1,) * len(batch))
    out = np.empty((n_seg + 1,) + batch)
    xw = np.broadcast_to(np.einsum("k...,...k->...", loss, maps.qw), batch)
    xh = np.broadcast_to(np.einsum("k...,...k->...", loss, maps.qh), batch)
    out[0] = xw
    for k in range(n_seg):
        p = loss[k]
        xw, xh = (maps.e11[..., k] * xw + maps.e12[..., k] * xh + maps.hw[..., k] * p,
                  maps.e21[..., k] * xw + maps.e22[..., k] * xh + maps.hh[..., k] * p)
        out[k + 1] = xw
    return out


def network_response(maps):
    """Winding rise at the cycle start and at each segment end per watt lost in each segment.

    Parameters
    ----------
    maps : NetworkMaps
        From :func:`network_segment_maps`, arrays of shape batch + (S,) [K/W].

    Returns
    -------
    ndarray
        R of shape batch + (S + 1, S): θw at the start (row 0) and at the end of
        segment k (row k) is Σ_j R[k, j]·P_j [K/W].

    Notes
    -----
    Relation: the recurrence of :func:`network_peak_rise` carried on the loss
    vector instead of the state: w_0 = q_w, h_0 = q_h; w_k = e11·w_{k−1} +
    e12·h_{k−1} + hw_k·u_k, h_k likewise (u_k the k-th unit vector).  With one
    R per motor, the peaks of all its gear ratios are one matrix product.
    Validity: as :func:`network_segment_maps`.

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60034-1.
    """
    n = maps.e11.shape[-1]
    batch = np.broadcast_shapes(maps.e11.shape, maps.qw.shape)[:-1]
    w = np.broadcast_to(maps.qw, batch + (n,)).astype(float)
    h = np.broadcast_to(maps.qh, batch + (n,)).astype(float)
    out = np.empty(batch + (n + 1, n))
    out[..., 0, :] = w
    for k in range(n):
        e11, e12 = maps.e11[..., k, None], maps.e12[..., k, None]
        e21, e22 = maps.e21[..., k, None], maps.e22[..., k, None]
        w, h = e11 * w + e12 * h, e21 * w + e22 * h
        w[..., k] += maps.hw[..., k]
        h[..., k] += maps.hh[..., k]
        out[..., k + 1, :] = w
    return out


def network_peak_rise_grid(losses, response):
    """Peak winding rise of many loss profiles per network: :func:`network_peak_rise` as one
    batched matrix product.

    Parameters
    ----------
    losses : ndarray
        Loss per segment, shape (S, M, R): S segments, M networks, R profiles each [W].
    response : ndarray
        From :func:`network_response`, shape (M, S + 1, S) [K/W].

    Returns
    -------
    ndarray
        Highest θw over the cycle, shape (M, R) [K].

    Notes
    -----
    Relation: max over k of Σ_j R[k, j]·P_j (start and segment ends, as
    :func:`network_peak_rise`).  Validity: as :func:`network_segment_maps`.

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60034-1.
    """
    loss = np.moveaxis(np.asarray(losses, dtype=float), 0, 1)       # (M, S, R)
    return np.matmul(response, loss).max(axis=1)


@vectorised
def hot_winding_rise(cold_rise, resistance_rise_coefficient, torque_constant_rise_coefficient):
    """Peak winding rise with resistance and torque constant held at the peak temperature.

    Parameters
    ----------
    cold_rise : float or ndarray
        Peak rise θ_cold with R and Kt at ambient (losses at ambient) [K].
    resistance_rise_coefficient : float or ndarray
        a = (dR/dT)/R(Ta): relative growth of the resistance per kelvin [1/K].
    torque_constant_rise_coefficient : float or ndarray
        b = (dKt/dT)/Kt(Ta): relative change of the torque constant per kelvin,
        negative for every magnet [1/K].

    Returns
    -------
    float or ndarray
        Smallest y ≥ 0 with y = θ_cold·(1 + a·y)/(1 + b·y)², ``inf`` where there
        is none (thermal runaway: the losses grow faster than the network sheds
        them) [K].

    Notes
    -----
    Relation: the losses scale with R(T)/Kt(T)² at fixed torque, so the rise
    at the peak temperature is s(y)·θ_cold.  G(y) = s(y)·θ_cold − y is convex
    for b ≤ 0 with G(0) ≥ 0: Newton steps from y = 0 rise monotonically to
    the smallest root, and a step where G > 0 no longer falls proves there is
    none.  Validity: linear R(T) and Kt(T), 1 + b·y > 0.

    References
    ----------
    IEC 60028 (copper law); IEC 60404-8-1 (reversible coefficient of Br);
    textbook chapter on heating and cooling of machines.
    """
    phi, a, b = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (
        cold_rise, resistance_rise_coefficient, torque_constant_rise_coefficient)))
    out = np.full(phi.shape, np.nan)
    flat = out.reshape(-1)
    ph, aa, bb = phi.reshape(-1), a.reshape(-1), b.reshape(-1)
    known = np.isfinite(ph) & np.isfinite(aa) & np.isfinite(bb)
    flat[known & (ph <= 0.0)] = 0.0
    idx = np.flatnonzero(known & (ph > 0.0))
    ph, aa, bb = ph[idx], aa[idx], bb[idx]
    k = 1.0 + bb * ph
    y = np.where(k > 0.0, ph * (1.0 + aa * ph) / (k * k), 0.0)   # one plain step: still ≤ the root
    for _ in range(NEWTON_STEPS):
        if not idx.size:
            break
        k = 1.0 + bb * y
        g = ph * (1.0 + aa * y) / (k * k) - y
        slope = ph * (aa / (k * k) - 2.0 * bb * (1.0 + aa * y) / (k * k * k)) - 1.0
        done = np.abs(g) <= NEWTON_TOLERANCE
        hopeless = ~done & ((k <= 0.0) | (slope >= 0.0) | ~np.isfinite(g))
        flat[idx[done]] = y[done]
        flat[idx[hopeless]] = np.inf
        keep = ~(done | hopeless)
        y = (y - g / np.where(slope < 0.0, slope, -1.0))[keep]
        idx, ph, aa, bb = idx[keep], ph[keep], aa[keep], bb[keep]
    flat[idx] = np.inf          # not converged: no consistent temperature
    return out
