"""Exact affine maps of the linear two-node network over steps, and the stationary maxima inside them.

On a step of duration h the network dθ/dt = M·θ + u0 + u1·t (M with real,
distinct eigenvalues λ1 > λ2, its off-diagonal product being positive) has
θ(t) = E(t)·θ(0) + F(t)·u0 + G(t)·u1 with E = e^{Mt} (Putzer: E =
e^{λ2 t}·I + (e^{λ1 t} − e^{λ2 t})/Δ·(M − λ2·I), Δ = λ1 − λ2) and F, G its
first and second integrals, written with φ_k(z) = (e^z − Σ_{j<k} z^j/j!)/z^k
so that they stay accurate for short steps.  :func:`interior_peaks` finds the
largest winding value at a stationary point inside each step.  Used by
:mod:`catalog.physics.hot_network` and :mod:`catalog.physics.ramp_network`.

Sources: linear ODE theory (matrix exponential, Putzer's formula; variation
of constants); Newton's method with a bisection safeguard.
"""

from __future__ import annotations

import numpy as np

__all__ = ["Steps", "phi", "interior_peaks"]

_EXPONENT_CAP = 700.0
_ROOT_STEPS = 60            # Newton (or bisection) steps for a stationary point inside a step at most

_SERIES = (None, (1.0, 1 / 2, 1 / 6, 1 / 24, 1 / 120, 1 / 720),
           (1 / 2, 1 / 6, 1 / 24, 1 / 120, 1 / 720, 1 / 5040),
           (1 / 6, 1 / 24, 1 / 120, 1 / 720, 1 / 5040, 1 / 40320))


def phi(z, em1, order):
    """φ_k(z) = (e^z − Σ_{j<k} z^j/j!)/z^k for k = 1, 2, 3 from em1 = expm1(z), its series near 0."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if order == 1:
            out = em1 / z
        elif order == 2:
            out = (em1 - z) / (z * z)
        else:
            out = (em1 - z - 0.5 * z * z) / (z * z * z)
    small = np.abs(z) < 0.05
    if small.any():
        zs = z[small]
        series = np.zeros_like(zs)
        for coefficient in reversed(_SERIES[order]):
            series = series * zs + coefficient
        out[small] = series
    return out


class Steps:
    """Exact affine maps of a batch of steps of durations ``h`` (arrays broadcast together)."""

    def __init__(self, m11, m12, m21, m22, h):
        m11, m12, m21, m22, h = np.broadcast_arrays(m11, m12, m21, m22, h)
        half = (m11 - m22) * 0.5
        root = np.sqrt(half * half + m12 * m21)
        lam2 = (m11 + m22) * 0.5 - root
        lam1 = (m11 * m22 - m12 * m21) / lam2                 # det/λ2: accurate for the slow mode
        self.m = (m11, m12, m21, m22)
        self.k11, self.k22 = m11 - lam2, m22 - lam2          # K = M − λ2·I
        self.lam1, self.lam2, self.delta, self.h = lam1, lam2, 2.0 * root, h
        self._cache = {}

    def _exp(self, t):
        key = id(t)
        if key not in self._cache:
            z1 = np.minimum(self.lam1 * t, _EXPONENT_CAP)
            z2 = np.minimum(self.lam2 * t, _EXPONENT_CAP)
            self._cache[key] = (t, z1, z2, np.expm1(z1), np.expm1(z2))
        return self._cache[key][1:]

    def _pair(self, order, t):
        """(λ2-part, (λ1-part − λ2-part)/Δ) of the order-th integral of E over [0, t]."""
        z1, z2, em1, em2 = self._exp(t)
        if order == 0:
            e2 = em2 + 1.0
            dt = self.delta * t
            with np.errstate(divide="ignore", invalid="ignore"):
                p = (em1 - em2) / self.delta
            near = dt < 1e-3        # (e^{λ1 t} − e^{λ2 t})/Δ = e^{λ2 t}·t·(1 + Δt/2 + ...) without cancellation
            if near.any():
                p = np.where(near, e2 * t * (1.0 + dt * (0.5 + dt / 6.0)), p)
            return e2, p
        scale = t ** order
        a1, a2 = scale * phi(z1, em1, order), scale * phi(z2, em2, order)
        with np.errstate(divide="ignore", invalid="ignore"):
            return a2, np.where(self.delta > 0.0, (a1 - a2) / self.delta, 0.0)

    def matrices(self, order, t=None):
        """The order-th integral of E over [0, t] as (x11, x12, x21, x22)."""
        t = self.h if t is None else t
        d, p = self._pair(order, t)
        return d + p * self.k11, p * self.m[1], p * self.m[2], d + p * self.k22

    def apply(self, x, v, order, t=None):
        """(order-th integral matrix) @ (x, v)."""
        a11, a12, a21, a22 = self.matrices(order, t)
        return a11 * x + a12 * v, a21 * x + a22 * v


def interior_peaks(out_w, out_h, lin):
    """Largest θw at a stationary point inside each step, (J, n), −inf where there is none.

    With θ' = v at a step's start and θ'' = M·v + u1 = w there, θw''(t) =
    e^{λ2 t}·(w1 + (e^{Δt} − 1)/Δ·(K·w)_1) vanishes at most once, at t_c =
    log1p(−Δ·w1/(K·w)_1)/Δ; so θw' is monotone on [0, t_c] and [t_c, h], a
    maximum lies where θw' turns from positive to negative on one of them,
    and Newton's method on θw' (θw'' = (E(t)·w)_1), kept inside that bracket
    by bisection, finds it.
    """
    steps, u0w, u0h, u1w, u1h = lin
    shape = out_w[1:].shape
    m11, m12, m21, m22 = steps.m
    k11 = steps.k11
    u0w, u0h, u1w, u1h = (np.broadcast_to(x, shape) for x in (u0w, u0h, u1w, u1h))
    h = steps.h
    best = np.full(shape, -np.inf)
    vw = m11 * out_w[:-1] + m12 * out_h[:-1] + u0w            # θ'(0)
    vh = m21 * out_w[:-1] + m22 * out_h[:-1] + u0h
    rate_end = m11 * out_w[1:] + m12 * out_h[1:] + u0w + u1w * h
    ww = m11 * vw + m12 * vh + u1w                             # θ''(0)
    wh = m21 * vw + m22 * vh + u1h
    kw = k11 * ww + m12 * wh                                   # (K·θ''(0))_1
    with np.errstate(divide="ignore", invalid="ignore"):
        arg = -steps.delta * ww / kw
        t_c = np.log1p(np.where(arg > -1.0, arg, np.nan)) / steps.delta
    inside = (t_c > 0.0) & (t_c < h)
    t_c = np.where(inside, t_c, h)

    def at(j, i):
        """θw'(t) = (E(t)·v + F(t)·u1)_1 and θw''(t) = (E(t)·w)_1 of the steps (j, i), as a function of t."""
        pick = Steps(m11[j, i], m12[j, i] if m12.ndim else m12, m21[j, i] if m21.ndim else m21,
                      m22[j, i] if m22.ndim else m22, h[j, i])
        v = (vw[j, i], vh[j, i], u1w[j, i], u1h[j, i], ww[j, i], wh[j, i])

        def rate(t):
            e11, e12, _, _ = pick.matrices(0, t)
            f11, f12, _, _ = pick.matrices(1, t)
            return e11 * v[0] + e12 * v[1] + f11 * v[2] + f12 * v[3], e11 * v[4] + e12 * v[5]
        return rate, pick

    j, i = np.nonzero(inside & (h > 0.0))
    rate_c = rate_end.copy()
    if j.size:
        rate_c[j, i] = at(j, i)[0](t_c[j, i])[0]
    first = (vw > 0.0) & (rate_c < 0.0) & (h > 0.0)            # on [0, t_c] (or the whole step)
    second = inside & (rate_c > 0.0) & (rate_end < 0.0)        # on [t_c, h]
    j, i = np.nonzero(first | second)
    if not j.size:
        return best
    low = np.where(first[j, i], 0.0, t_c[j, i])
    high = np.where(first[j, i], t_c[j, i], h[j, i])
    rate, pick = at(j, i)
    t = 0.5 * (low + high)
    active = np.ones(t.shape, dtype=bool)   # each step stops on its own: its result never depends on the batch
    for _ in range(_ROOT_STEPS):     # Newton on θw' = 0, kept inside the bracket (else bisection)
        r, dr = rate(t)
        rising = r > 0.0
        low, high = np.where(active & rising, t, low), np.where(active & ~rising, t, high)
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = t - r / dr
        t_next = np.where((newton >= low) & (newton <= high), newton, 0.5 * (low + high))
        converged = (np.abs(t_next - t) <= 1e-10 * pick.h) | (high - low <= 1e-10 * pick.h)
        t = np.where(active, t_next, t)
        active &= ~converged
        if not active.any():
            break
    sw, sh = pick.apply(out_w[:-1][j, i], out_h[:-1][j, i], 0, t)
    bw, _ = pick.apply(u0w[j, i], u0h[j, i], 1, t)
    gw, _ = pick.apply(u1w[j, i], u1h[j, i], 2, t)
    best[j, i] = sw + bw + gw            # one stationary maximum per step at most
    return best
