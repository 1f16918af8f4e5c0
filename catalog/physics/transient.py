"""Transient and periodic temperatures of the two-node thermal network.

State: rises above ambient θ = (θw, θh) of winding and housing.  For a
segment with constant current I the network (see :mod:`catalog.physics.thermal`)
is the linear ODE ::

    dθ/dt = M·θ + u,  M = [[(g − 1/Rth1)/Cw,  1/(Rth1·Cw)],
                           [1/(Rth1·Ch),  −(1/Rth1 + 1/Rth2)/Ch]],
    u = (I²·R(Ta)/Cw, 0),  g = I²·R_ref·α_ref = dP/dTw,

*exactly*, because the copper resistance is linear in temperature.  So each
segment is solved in closed form with the 2×2 matrix exponential (Putzer's
formula; M has real distinct eigenvalues since its off-diagonal product is
positive), no sub-steps and no iteration on R(T).  A cycle of segments is
then an exact affine map θ_end = A·θ_start + b, and the periodic steady state
is the solution of (I − A)·θ = b.  It exists, and is reached from any start,
iff the spectral radius of A is below 1; otherwise the cycle runs away and
the peak is ``inf``.  Within a segment θw(t) is a constant plus two
exponentials, so it has at most one interior extremum, found in closed form:
the returned peak is exact, not sampled.

Source: lumped-parameter thermal networks of machines (textbook chapter on
heating and cooling); linear ODE theory (matrix exponential); IEC 60034-1
duty types S1..S10 (periodic duty); IEC 60028 (copper law).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .broadcast import vectorised
from .temperature import (
    COEFFICIENT_REFERENCE_TEMPERATURE,
    COPPER_TEMPERATURE_COEFFICIENT,
    DEFAULT_REFERENCE_TEMPERATURE,
)
from .thermal import linear_resistance_terms

__all__ = [
    "ThermalTrajectory",
    "periodic_winding_temperature",
    "transient_winding_temperature",
]

_OVERFLOW_EXPONENT = 600.0  # exp(600) ~ 1e260: treat as runaway


class ThermalTrajectory(NamedTuple):
    """Sampled temperatures over one pass of a current profile.

    ``time`` [s], ``winding_temperature`` [K] and ``housing_temperature``
    [K] have shape batch + (segments·samples_per_segment + 1,).
    """

    time: np.ndarray
    winding_temperature: np.ndarray
    housing_temperature: np.ndarray


def _exprel(z):
    """expm1(z)/z, 1 at z = 0."""
    small = np.abs(z) < 1e-6
    safe = np.where(small, 1.0, z)
    return np.where(small, 1.0 + z / 2.0 + z * z / 6.0, np.expm1(safe) / safe)


class _Segment:
    """Closed-form solution of one constant-current segment (batch arrays)."""

    def __init__(self, current, r_amb, slope, rth1, rth2, cw, ch):
        i2 = current * current
        g = i2 * slope
        self.m11 = (g - 1.0 / rth1) / cw
        self.m12 = 1.0 / (rth1 * cw)
        self.m21 = 1.0 / (rth1 * ch)
        self.m22 = -(1.0 / rth1 + 1.0 / rth2) / ch
        self.u1 = i2 * r_amb / cw
        half = (self.m11 - self.m22) / 2.0
        s = np.sqrt(half * half + self.m12 * self.m21)
        self.lam2 = (self.m11 + self.m22) / 2.0 - s          # < 0 always
        det = (1.0 - g * (rth1 + rth2)) / (rth1 * rth2 * cw * ch)
        self.lam1 = det / self.lam2                            # accurate near 0
        self.delta = 2.0 * s                                   # λ1 − λ2 > 0
        self.k11 = self.m11 - self.lam2                        # K = M − λ2·I
        self.k22 = self.m22 - self.lam2

    def _expand(self, t):
        """Coefficients broadcast against t (t has extra trailing axes)."""
        extra = np.ndim(t) - np.ndim(self.m11)
        return (lambda a: a if extra <= 0 else np.expand_dims(a, tuple(range(-extra, 0))))

    def _putzer(self, t, ex):
        """e^{λ2 t} and (e^{λ1 t} − e^{λ2 t})/Δ without cancellation or 0·inf."""
        lam1, lam2, delta = ex(self.lam1), ex(self.lam2), ex(self.delta)
        e2 = np.exp(lam2 * t)
        dt = delta * t
        small = dt < 1.0
        near = e2 * t * _exprel(np.where(small, dt, 0.0))
        far = (np.exp(lam1 * t) - e2) / delta
        return e2, np.where(small, near, far)

    def state(self, x1, x2, t):
        """θ(t) from θ(0) = (x1, x2); t may carry extra trailing axes."""
        ex = self._expand(t)
        lam1, lam2, delta = ex(self.lam1), ex(self.lam2), ex(self.delta)
        k11, k12, k21, k22 = ex(self.k11), ex(self.m12), ex(self.m21), ex(self.k22)
        x1, x2, u1 = ex(x1), ex(x2), ex(self.u1)
        e2, p = self._putzer(t, ex)                 # E = e2·I + p·K
        h2 = t * _exprel(lam2 * t)                  # ∫ e^{λ2 τ} dτ
        phi1 = (t * _exprel(lam1 * t) - h2) / delta  # ∫ p dτ
        y1 = (e2 + p * k11) * x1 + p * k12 * x2 + (h2 + phi1 * k11) * u1
        y2 = p * k21 * x1 + (e2 + p * k22) * x2 + phi1 * k21 * u1
        return y1, y2

    def map(self, t):
        """Affine map θ(t) = E·θ(0) + c as (e11, e12, e21, e22, c1, c2)."""
        c1, c2 = self.state(0.0, 0.0, t)
        e2, p = self._putzer(t, self._expand(t))
        return (e2 + p * self.k11, p * self.m12, p * self.m21, e2 + p * self.k22,
                c1, c2)

    def interior_peak(self, x1, x2, duration):
        """θw at the interior stationary point, −inf where there is none."""
        v1 = self.m11 * x1 + self.m12 * x2 + self.u1
        v2 = self.m21 * x1 + self.m22 * x2
        w1 = self.k11 * v1 + self.m12 * v2
        # dθw/dt = (E·v)_1 = e^{λ2 t}·(v1 + w1·expm1(Δt)/Δ) = 0
        arg = -self.delta * v1 / np.where(w1 == 0.0, np.nan, w1)
        t_star = np.log1p(np.where(arg > -1.0, arg, np.nan)) / self.delta
        valid = (t_star > 0.0) & (t_star < duration)
        t_star = np.where(valid, t_star, 0.0)
        y1, _ = self.state(x1, x2, t_star)
        return np.where(valid, y1, -np.inf)


def _setup(durations, currents, terminal_resistance, rth1, rth2, tau_w, tau_motor,
           ambient, tref, alpha, talpha, fast=False):
    durations = np.asarray(durations, dtype=float)
    currents = np.asarray(currents, dtype=float)
    if durations.ndim == 0 or currents.ndim == 0:
        raise ValueError("durations and currents need a last axis of segments")
    if np.any(durations < 0.0):
        raise ValueError("segment durations must not be negative")
    durations, currents = np.broadcast_arrays(durations, currents)
    params = [np.asarray(p, dtype=float) for p in
              (terminal_resistance, rth1, rth2, tau_w, tau_motor, ambient, tref, alpha,
               talpha)]
    batch = np.broadcast_shapes(durations.shape[:-1], *(p.shape for p in params))
    count = durations.shape[-1]
    durations = np.broadcast_to(durations, batch + (count,))
    currents = np.broadcast_to(currents, batch + (count,))
    r, rth1, rth2, tau_w, tau_motor, ambient, tref, alpha, talpha = (
        np.broadcast_to(p, batch) for p in params)
    r_amb, slope = linear_resistance_terms(r, ambient, tref, alpha, talpha)
    cw, ch = tau_w / rth1, tau_motor / rth2
    if fast:  # the whole-array path of the periodic peak: no per-segment objects
        return durations, ambient, (currents, r_amb, slope, rth1, rth2, cw, ch)
    segments = [_Segment(currents[..., k], r_amb, slope, rth1, rth2, cw, ch)
                for k in range(count)]
    return durations, ambient, segments


def _propagate(segments, durations, x1, x2, want_trajectory, samples):
    """Peak θw over one pass from (x1, x2), and the sampled trajectory."""
    peak = x1
    times, w_samples, h_samples = [np.zeros_like(x1)], [x1], [x2]
    elapsed = np.zeros_like(x1)
    for k, segment in enumerate(segments):
        duration = durations[..., k]
        peak = np.maximum(peak, segment.interior_peak(x1, x2, duration))
        if want_trajectory:
            fractions = np.arange(1, samples + 1) / samples
            t = duration[..., None] * fractions
            y1, y2 = segment.state(x1, x2, t)
            times.append(elapsed[..., None] + t)
            w_samples.append(y1)
            h_samples.append(y2)
        x1, x2 = segment.state(x1, x2, duration)
        elapsed = elapsed + duration
        peak = np.maximum(peak, x1)
    trajectory = None
    if want_trajectory:
        join = (lambda parts: np.concatenate(
            [parts[0][..., None]] + parts[1:], axis=-1))
        trajectory = (join(times), join(w_samples), join(h_samples))
    return peak, trajectory


def _exprel_times(z, t):
    """t·expm1(z)/z with the series near z = 0 (z = λ·t) [s]."""
    small = np.abs(z) < 1e-6
    safe = np.where(small, 1.0, z)
    return t * np.where(small, 1.0 + z * (0.5 + z / 6.0), np.expm1(safe) / safe)


def _periodic_peak_fast(durations, currents, r_amb, slope, rth1, rth2, cw, ch):
    """Periodic peak rise θw [K] of a batch (B,) over S segments, no trajectory.

    The same closed form as :class:`_Segment` (Putzer, exact interior extremum),
    evaluated on whole arrays at once, laid out segments-first (S, B) so that
    the 2×2 affine composition and the propagation of the state, the only
    steps that run over the segments axis, work on contiguous (B,) rows.
    ``durations``/``currents`` have shape (B, S) (broadcast views are fine);
    the parameters shape (B,).  Returns (peak rise [K], runaway [-]).
    """
    row = (lambda a: np.asarray(a, dtype=float)[None, :])
    r_amb, slope, rth1, rth2, cw, ch = (row(a) for a in (r_amb, slope, rth1, rth2, cw, ch))
    d = np.ascontiguousarray(np.asarray(durations, dtype=float).T)
    if d.shape[1] != r_amb.shape[1] and np.all(d == d[:, :1]):
        d = d[:, :1]                                   # one profile for the whole batch
    i2 = np.square(np.asarray(currents, dtype=float).T)  # (S, B)
    n_seg, size = i2.shape
    g = i2 * slope
    m12, m21 = 1.0 / (rth1 * cw), 1.0 / (rth1 * ch)
    m22 = -(1.0 / rth1 + 1.0 / rth2) / ch
    m11 = (g - 1.0 / rth1) / cw
    u1 = i2 * (r_amb / cw)
    half = (m11 - m22) * 0.5
    s = np.sqrt(half * half + m12 * m21)
    lam2 = (m11 + m22) * 0.5 - s
    lam1 = ((1.0 - g * (rth1 + rth2)) / (rth1 * rth2 * cw * ch)) / lam2
    delta = 2.0 * s
    k11, k22 = m11 - lam2, m22 - lam2
    z1 = lam1 * d
    overflow = np.any(z1 > _OVERFLOW_EXPONENT, axis=0)
    np.minimum(z1, _OVERFLOW_EXPONENT, out=z1)
    em2 = np.expm1(lam2 * d)
    e2 = em2 + 1.0
    h2 = em2 / lam2                                   # ∫ e^{λ2 τ} dτ
    h1 = _exprel_times(z1, d)                         # ∫ e^{λ1 τ} dτ
    dd = delta * d
    # (e^{λ1 t} − e^{λ2 t})/Δ = e^{λ2 t}·expm1(Δt)/Δ, without overflow for large Δt
    p = np.where(dd < 1.0, e2 * np.expm1(np.minimum(dd, 1.0)), np.exp(z1) - e2) / delta
    phi1 = (h1 - h2) / delta
    e11, e12, e21, e22 = e2 + p * k11, p * m12, p * m21, e2 + p * k22
    c1, c2 = (h2 + phi1 * k11) * u1, phi1 * m21 * u1
    a11, a12, a21, a22 = e11[0], e12[0], e21[0], e22[0]
    b1, b2 = c1[0], c2[0]
    for k in range(1, n_seg):
        f11, f12, f21, f22 = e11[k], e12[k], e21[k], e22[k]
        a11, a12, a21, a22 = (f11 * a11 + f12 * a21, f11 * a12 + f12 * a22,
                              f21 * a11 + f22 * a21, f21 * a12 + f22 * a22)
        b1, b2 = f11 * b1 + f12 * b2 + c1[k], f21 * b1 + f22 * b2 + c2[k]
    half_trace = (a11 + a22) / 2.0
    radius = half_trace + np.sqrt(np.maximum(half_trace ** 2 - (a11 * a22 - a12 * a21), 0.0))
    runaway = overflow | (radius >= 1.0)
    det = (1.0 - a11) * (1.0 - a22) - a12 * a21
    x1 = ((1.0 - a22) * b1 + a12 * b2) / det
    x2 = (a21 * b1 + (1.0 - a11) * b2) / det
    start1, start2 = np.empty((n_seg + 1, size)), np.empty((n_seg, size))
    start1[0] = x1
    for k in range(n_seg):
        start2[k] = x2
        x1, x2 = e11[k] * x1 + e12[k] * x2 + c1[k], e21[k] * x1 + e22[k] * x2 + c2[k]
        start1[k + 1] = x1
    peak = start1.max(axis=0)                         # cycle start and every segment end
    start1 = start1[:n_seg]
    # interior extremum: dθw/dt = e^{λ2 t}·(v1 + w1·expm1(Δt)/Δ) = 0 at t* = log1p(−Δ·v1/w1)/Δ
    v1 = m11 * start1 + m12 * start2 + u1
    w1 = k11 * v1 + m12 * (m21 * start1 + m22 * start2)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        arg = -delta * v1 / w1
        cand = (v1 > 0.0) & (arg > -1.0) & (arg < np.expm1(np.minimum(dd, _OVERFLOW_EXPONENT)))
    if cand.any():
        segs, cols = np.nonzero(cand)
        full = (lambda a: a[segs, cols] if a.shape[1] == size else a[segs if a.shape[0] == n_seg else 0, 0])
        dl, l1, l2, q11 = full(delta), full(lam1), full(lam2), full(k11)
        t = np.log1p(full(arg)) / dl
        ok = (t > 0.0) & (t < full(d))
        t = np.where(ok, t, 0.0)
        em2 = np.expm1(l2 * t)
        e2 = em2 + 1.0
        h2 = em2 / l2
        h1 = _exprel_times(l1 * t, t)
        pt = e2 * np.expm1(dl * t) / dl
        ph = (h1 - h2) / dl
        y1 = ((e2 + pt * q11) * start1[segs, cols] + pt * m12[0, cols] * start2[segs, cols]
              + (h2 + ph * q11) * full(u1))
        inner = np.full(size, -np.inf)
        np.maximum.at(inner, cols, np.where(ok, y1, -np.inf))
        peak = np.maximum(peak, inner)
    return peak, runaway

_PARAMETERS_DOC = """
    durations : ndarray
        Segment durations, shape (S,) or batch + (S,) [s].
    currents : ndarray
        Segment currents (sign irrelevant), same shape rules [A].
    terminal_resistance : float or ndarray
        Terminal resistance at the reference temperature, shape batch [Ω].
    thermal_resistance_winding_housing : float or ndarray
        Thermal resistance winding to housing Rth1 [K/W].
    thermal_resistance_housing_ambient : float or ndarray
        Thermal resistance housing to ambient Rth2 [K/W].
    thermal_time_constant_winding : float or ndarray
        Winding thermal time constant τw (Cw = τw/Rth1) [s].
    thermal_time_constant_motor : float or ndarray
        Motor thermal time constant τ_motor (Ch = τ_motor/Rth2) [s].
    ambient_temperature : float or ndarray
        Ambient temperature Ta [K].
    resistance_reference_temperature : float or ndarray
        Temperature at which ``terminal_resistance`` is stated [K].
    temperature_coefficient : float or ndarray
        Resistance coefficient α [1/K]; default copper α20.
    coefficient_reference_temperature : float or ndarray
        Temperature the coefficient refers to [K]."""

_TAIL_DOC = """
    trajectory : bool
        Also return a :class:`ThermalTrajectory` [-].
    samples_per_segment : int
        Trajectory samples per segment (the peak never depends on it) [-]."""


@vectorised
def periodic_winding_temperature(durations, currents, terminal_resistance,
                                 thermal_resistance_winding_housing,
                                 thermal_resistance_housing_ambient,
                                 thermal_time_constant_winding,
                                 thermal_time_constant_motor, ambient_temperature,
                                 resistance_reference_temperature=DEFAULT_REFERENCE_TEMPERATURE,
                                 *, temperature_coefficient=COPPER_TEMPERATURE_COEFFICIENT,
                                 coefficient_reference_temperature=COEFFICIENT_REFERENCE_TEMPERATURE,
                                 trajectory=False, samples_per_segment=16):
    """Peak winding temperature in the periodic steady state of a repeated profile.

    Parameters
    ----------{parameters}{tail}

    Returns
    -------
    float or ndarray
        Peak winding temperature over the periodic cycle, shape batch [K];
        ``inf`` where the cycle has no periodic steady state (runaway).
        With ``trajectory=True`` a tuple (peak, ThermalTrajectory) whose
        trajectory starts at the periodic cycle-start state [K].

    Notes
    -----
    Exact: closed-form segment solutions (R(T) linear, so the network is
    linear), cycle map θ → A·θ + b solved as (I − A)·θ = b, spectral radius
    of A < 1 required, exact interior extremum per segment.  The profile is
    repeated indefinitely (IEC 60034-1 periodic duty).
    Validity: two-node lumped model with Cw = τw/Rth1, Ch = τ_motor/Rth2,
    copper loss only, linear copper R(T), constant Ta.

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60034-1; IEC 60028.
    """
    fast = not trajectory
    durations, ambient, segments = _setup(
        durations, currents, terminal_resistance, thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient, thermal_time_constant_winding,
        thermal_time_constant_motor, ambient_temperature, resistance_reference_temperature,
        temperature_coefficient, coefficient_reference_temperature, fast=fast)
    if np.any(np.sum(durations, axis=-1) <= 0.0):
        raise ValueError("a periodic profile needs a positive cycle duration")
    if fast:
        batch = ambient.shape
        flat = (lambda a: np.reshape(a, (-1,) + a.shape[len(batch):]))
        cur, *params = segments
        peak, runaway = _periodic_peak_fast(flat(durations), flat(cur), *(flat(q) for q in params))
        return np.where(runaway.reshape(batch), np.inf, ambient + peak.reshape(batch))
    one, zero = np.ones(ambient.shape), np.zeros(ambient.shape)
    a11, a12, a21, a22, b1, b2 = one, zero, zero, one, zero, zero
    overflow = np.zeros(ambient.shape, dtype=bool)
    for k, segment in enumerate(segments):
        e11, e12, e21, e22, c1, c2 = segment.map(durations[..., k])
        a11, a12, a21, a22 = (e11 * a11 + e12 * a21, e11 * a12 + e12 * a22,
                              e21 * a11 + e22 * a21, e21 * a12 + e22 * a22)
        b1, b2 = e11 * b1 + e12 * b2 + c1, e21 * b1 + e22 * b2 + c2
        overflow |= segment.lam1 * durations[..., k] > _OVERFLOW_EXPONENT
    half_trace = (a11 + a22) / 2.0
    radius = half_trace + np.sqrt(np.maximum(half_trace ** 2 - (a11 * a22 - a12 * a21),
                                             0.0))
    runaway = overflow | (radius >= 1.0)
    det = (1.0 - a11) * (1.0 - a22) - a12 * a21
    x1 = ((1.0 - a22) * b1 + a12 * b2) / det
    x2 = (a21 * b1 + (1.0 - a11) * b2) / det
    peak, samples = _propagate(segments, durations, x1, x2, trajectory,
                               int(samples_per_segment))
    peak = np.where(runaway, np.inf, ambient + peak)
    if not trajectory:
        return peak
    time, theta_w, theta_h = samples
    hot = runaway[..., None]
    return peak, ThermalTrajectory(
        time, np.where(hot, np.inf, ambient[..., None] + theta_w),
        np.where(hot, np.inf, ambient[..., None] + theta_h))


@vectorised
def transient_winding_temperature(durations, currents, terminal_resistance,
                                  thermal_resistance_winding_housing,
                                  thermal_resistance_housing_ambient,
                                  thermal_time_constant_winding,
                                  thermal_time_constant_motor, ambient_temperature,
                                  resistance_reference_temperature=DEFAULT_REFERENCE_TEMPERATURE,
                                  *, temperature_coefficient=COPPER_TEMPERATURE_COEFFICIENT,
                                  coefficient_reference_temperature=COEFFICIENT_REFERENCE_TEMPERATURE,
                                  initial_winding_temperature=None,
                                  initial_housing_temperature=None,
                                  trajectory=False, samples_per_segment=16):
    """Peak winding temperature over one pass of a profile from a given state.

    Parameters
    ----------{parameters}
    initial_winding_temperature : float or ndarray
        Winding temperature at t = 0; default ambient (cold start) [K].
    initial_housing_temperature : float or ndarray
        Housing temperature at t = 0; default ambient [K].{tail}

    Returns
    -------
    float or ndarray
        Peak winding temperature over the pass, shape batch [K]; with
        ``trajectory=True`` a tuple (peak, ThermalTrajectory) [K].

    Notes
    -----
    Same exact segment solution as :func:`periodic_winding_temperature`,
    applied once from the initial state (short-time overload from cold or
    from a known state).  Finite even above the runaway current, since the
    pass has finite length.
    Validity: two-node lumped model, copper loss only, linear copper R(T).

    References
    ----------
    Textbook chapter on heating and cooling of machines; IEC 60028.
    """
    durations, ambient, segments = _setup(
        durations, currents, terminal_resistance, thermal_resistance_winding_housing,
        thermal_resistance_housing_ambient, thermal_time_constant_winding,
        thermal_time_constant_motor, ambient_temperature, resistance_reference_temperature,
        temperature_coefficient, coefficient_reference_temperature)
    start_w = ambient if initial_winding_temperature is None else initial_winding_temperature
    start_h = ambient if initial_housing_temperature is None else initial_housing_temperature
    x1 = np.broadcast_to(np.asarray(start_w, dtype=float) - ambient, ambient.shape)
    x2 = np.broadcast_to(np.asarray(start_h, dtype=float) - ambient, ambient.shape)
    peak, samples = _propagate(segments, durations, x1, x2, trajectory,
                               int(samples_per_segment))
    peak = ambient + peak
    if not trajectory:
        return peak
    time, theta_w, theta_h = samples
    return peak, ThermalTrajectory(time, ambient[..., None] + theta_w,
                                   ambient[..., None] + theta_h)


for _function in (periodic_winding_temperature, transient_winding_temperature):
    if _function.__doc__:  # docstrings are stripped under python -OO
        _function.__doc__ = _function.__doc__.format(parameters=_PARAMETERS_DOC,
                                                     tail=_TAIL_DOC)
del _function
