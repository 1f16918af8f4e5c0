"""The verdict pass of a large selection, compiled (numba): the same model as the numpy path of
:mod:`catalog.select.evaluate`, one candidate at a time with no (S, N) temporaries.

A selection over hundreds of thousands of candidates spends its time in the per-segment steps of
the brackets: numpy runs each as its own pass over (segments × candidates) arrays, near the
machine's memory speed, and there are about thirty of them.  Here each candidate's segments stay
in registers and a small local array:

* :func:`verdict_pass` — per candidate: the electromagnetic torque of every segment
  (``basis @ coef``), its largest square and its mean square over the cycle, the copper loss's
  winding rise per (N·m)² through the two-node network with R and Kt at ambient (periodic start
  from the maps' ``qw``/``qh``, then segment by segment: the maps of
  :func:`catalog.physics.network_rise_path`), both brackets of the peak rise exactly as the numpy
  path forms them (:func:`catalog.select.evaluate._offset_rise` and ``_lower``), and the needed
  voltage with the winding at ambient and in the hot corner at each bracket (R/Kt and Ke from the
  linear temperature laws through a and b, the relative growth of R and Kt per kelvin).

The numpy path stays the reference: ``tests/select/test_kernel.py`` checks that both give the same
numbers (to rounding) and the same verdicts.  The fixed point y = s(y)·θ + offset is
:func:`catalog.physics.hot_winding_rise` written for one value (same start, steps and
tolerance).  Everything is compiled on first use and cached on disk (``cache=True``): numba is
imported only by a selection large enough to need it (:data:`catalog.select.evaluate.KERNEL_MIN`).
"""
from __future__ import annotations

__all__ = ["verdict_pass", "offset_rise", "warm"]

import math

import numba
import numpy as np

from ..physics.network import NEWTON_STEPS, NEWTON_TOLERANCE

_jit = numba.njit(cache=True, nogil=True, error_model="numpy")
_inline = numba.njit(cache=True, nogil=True, error_model="numpy", inline="always")


@_inline
def _hot_rise(ph, aa, bb):
    """:func:`catalog.physics.hot_winding_rise` of one value [K] (NaN: unknown, inf: none)."""
    if not (math.isfinite(ph) and math.isfinite(aa) and math.isfinite(bb)):
        return np.nan
    if ph <= 0.0:
        return 0.0
    k = 1.0 + bb * ph
    y = ph * (1.0 + aa * ph) / (k * k) if k > 0.0 else 0.0      # one plain step: still ≤ the root
    for _ in range(NEWTON_STEPS):
        k = 1.0 + bb * y
        g = ph * (1.0 + aa * y) / (k * k) - y
        slope = ph * (aa / (k * k) - 2.0 * bb * (1.0 + aa * y) / (k * k * k)) - 1.0
        if abs(g) <= NEWTON_TOLERANCE:
            return y
        if k <= 0.0 or slope >= 0.0 or not math.isfinite(g):
            return np.inf
        y = y - g / slope
    return np.inf


@_inline
def offset_rise(cold, offset, a, b):
    """Smallest y with y = s(y)·cold + offset, s(y) = (1 + a·y)/(1 + b·y)² [K] (inf: none), as
    :func:`catalog.select.evaluate._offset_rise`."""
    ka, kb = 1.0 + a * offset, 1.0 + b * offset
    return offset + _hot_rise(cold * ka / (kb * kb), a / ka, b / kb)


@_jit
def verdict_pass(owner, coef, basis, w_mid, half_span, dur, period, rho, emf, brush, scale, a, b, usable,
                 limit, e11, e12, e21, e22, hw, hh, qw, qh, f, at_w, ends_w, ends_h, up_w, up_h, low_w, low_h,
                 repeat, sq_top, sq_rms, upper, lower, need_cold, need_upper, need_lower):
    """Per candidate i of a chunk (outputs: the last seven (N,) arrays).

    ``owner`` (N,) the row of each candidate's motor in the per-motor tables: the network maps
    ``e11 … qh`` (M, S) and the no-load loss's exact response (``ends_*`` (S + 1, M) at the cycle
    start and every segment end, ``up_*``/``low_*`` (M,) its highest and lowest), per W·s/rad, of a
    loss entering the winding (``_w``) or the housing (``_h``); ``f`` (N,) the no-load loss per
    rad/s of load speed T_f·n, ``at_w`` (N,) where it arises.  ``coef`` (4, N) and ``basis`` (S, 4):
    T_em = basis @ coef; ``rho`` = R/Kt and ``emf`` = Ke·n at ambient, ``brush`` the brush drop [V];
    ``scale`` = R/Kt² at ambient, ``a``/``b`` the relative growth of R and Kt per kelvin (the linear
    laws: R(θ)/Kt(θ) = rho·(1 + a·θ)/(1 + b·θ), Ke(θ)·n = emf·(1 + b·θ)); ``limit`` the rise at which
    the hot corner is capped (the winding's limit).

    Out: the largest T_em² and its mean over the cycle; ``upper``/``lower`` the brackets of the
    peak rise [K] (NaN where not ``usable``); the needed voltage with the winding at ambient and in
    the hot corner at each bracket (capped at ``limit``; at ``limit`` where not usable or runaway).
    """
    n_cand, n_seg = owner.shape[0], dur.shape[0]
    ends = np.empty(n_seg + 1)
    t = np.empty(n_seg)
    for i in range(n_cand):
        m = owner[i]
        c0, c1, c2, c3 = coef[0, i], coef[1, i], coef[2, i], coef[3, i]
        top_sq, sum_sq = 0.0, 0.0
        xw, xh = 0.0, 0.0
        for s in range(n_seg):
            ts = basis[s, 0] * c0 + basis[s, 1] * c1 + basis[s, 2] * c2 + basis[s, 3] * c3
            t[s] = ts
            sq = ts * ts
            if sq > top_sq or s == 0 or sq != sq:       # NaN wins, as np.maximum
                top_sq = sq
            sum_sq += dur[s] * sq
            xw += qw[m, s] * sq
            xh += qh[m, s] * sq
        sq_top[i], sq_rms[i] = top_sq, sum_sq / period
        rh, em, br, ai, bi = rho[i], emf[i], brush[i], a[i], b[i]
        hi, lo = np.nan, np.nan
        if usable[i]:
            # the copper loss per (N·m)² through the network, R and Kt at ambient: the cycle start, then
            # every segment end (the highest and the lowest are at one of them)
            ends[0] = xw
            peak, low = xw, xw
            for s in range(n_seg):
                sq = t[s] * t[s]
                xw, xh = (e11[m, s] * xw + e12[m, s] * xh + hw[m, s] * sq,
                          e21[m, s] * xw + e22[m, s] * xh + hh[m, s] * sq)
                ends[s + 1] = xw
                if xw > peak or xw != xw:
                    peak = xw
                if xw < low or xw != xw:
                    low = xw
            fi = f[i]
            nl_ends = ends_w if at_w[i] else ends_h
            nl_up = fi * (up_w[m] if at_w[i] else up_h[m])
            nl_low = fi * (low_w[m] if at_w[i] else low_h[m])
            sc = scale[i]
            hi = offset_rise(peak * sc, nl_up, ai, bi)
            # the lower bracket: every copper loss at the s of the cycle's coolest winding temperature
            # (a single pass starts at ambient: s = 1), the no-load loss's exact rise at each end
            grown = 1.0
            floor = 0.0
            if repeat:
                floor = offset_rise(low * sc, nl_low, ai, bi)
                grown = (1.0 + ai * floor) / (1.0 + bi * floor) ** 2
            if math.isfinite(floor):
                for k in range(n_seg + 1):
                    y = ends[k] * sc * grown + fi * nl_ends[k, m]
                    if y > lo or k == 0 or y != y:
                        lo = y
            else:
                lo = np.inf
        upper[i], lower[i] = hi, lo
        # the needed voltage: |R/Kt·T_em + V_brush·sign(T_em) + Ke·n·ω_mid| + Ke·n·|Δω|/2 (the worse
        # segment end) with the winding at ambient and in the hot corner at each bracket, capped at
        # the winding's limit (at the limit where the rise is unknown or runaway); the larger of cold
        # and hot per segment, the largest over segments (NaN never wins, as np.fmax)
        cap = limit[i]
        y1 = hi if usable[i] and hi < cap else cap
        y2 = lo if usable[i] and lo < cap else cap
        rh1, em1 = rh * (1.0 + ai * y1) / (1.0 + bi * y1), em * (1.0 + bi * y1)
        rh2, em2 = rh * (1.0 + ai * y2) / (1.0 + bi * y2), em * (1.0 + bi * y2)
        n0, n1, n2 = np.nan, np.nan, np.nan
        for s in range(n_seg):
            ts, w, h = t[s], w_mid[s], half_span[s]
            extra = br * np.sign(ts) if br > 0.0 else 0.0      # the brushes drop it in the current's direction
            v0 = abs(rh * ts + extra + em * w) + em * h
            v1 = abs(rh1 * ts + extra + em1 * w) + em1 * h
            v2 = abs(rh2 * ts + extra + em2 * w) + em2 * h
            v1 = v0 if v1 != v1 or v0 > v1 else v1
            v2 = v0 if v2 != v2 or v0 > v2 else v2
            if n0 != n0 or v0 > n0:
                n0 = v0
            if n1 != n1 or v1 > n1:
                n1 = v1
            if n2 != n2 or v2 > n2:
                n2 = v2
        need_cold[i], need_upper[i], need_lower[i] = n0, n1, n2


def warm() -> None:
    """Compile (or load from the on-disk cache) every kernel for the argument types a selection passes,
    on a one-candidate problem: ``make demo`` runs it, so that a first large selection does not
    compile (a few seconds)."""
    n_seg = 2
    one, seg = np.ones(1), np.ones(n_seg)
    tables = [np.ones((1, n_seg)) for _ in range(8)]
    outs = [np.empty(1) for _ in range(7)]
    verdict_pass(np.zeros(1, dtype=np.intp), np.ones((4, 1)), np.ones((n_seg, 4)), seg, seg, seg, 2.0, one, one,
                 one, one, one, one, np.ones(1, dtype=np.bool_), one, *tables, one, np.ones(1, dtype=np.bool_),
                 np.ones((n_seg + 1, 1)), np.ones((n_seg + 1, 1)), one, one, one, one, True, *outs)
