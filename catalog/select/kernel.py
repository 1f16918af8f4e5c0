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
#: candidates of one motor processed side by side (the per-segment steps of a block run over
#: contiguous rows: the compiler vectorises them) [-]
_BLOCK = 256
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
    width = _BLOCK
    t = np.empty((n_seg, width))
    ends = np.empty((n_seg + 1, width))
    top, ssum, xw, xh = np.empty(width), np.empty(width), np.empty(width), np.empty(width)
    peak, low, n0, n1, n2 = np.empty(width), np.empty(width), np.empty(width), np.empty(width), np.empty(width)
    hi, lo, grown = np.empty(width), np.empty(width), np.empty(width)
    rh1, em1, rh2, em2 = np.empty(width), np.empty(width), np.empty(width), np.empty(width)
    i0 = 0
    while i0 < n_cand:
        # a block: candidates of one motor (its maps are scalars per segment), at most ``width``
        m = owner[i0]
        i1 = i0 + 1
        while i1 < n_cand and i1 - i0 < width and owner[i1] == m:
            i1 += 1
        size = i1 - i0
        for j in range(size):
            top[j], ssum[j], xw[j], xh[j], n0[j] = 0.0, 0.0, 0.0, 0.0, np.nan
        for s in range(n_seg):
            b0, b1, b2, b3 = basis[s, 0], basis[s, 1], basis[s, 2], basis[s, 3]
            w, h, d, qws, qhs = w_mid[s], half_span[s], dur[s], qw[m, s], qh[m, s]
            for j in range(size):
                i = i0 + j
                ts = b0 * coef[0, i] + b1 * coef[1, i] + b2 * coef[2, i] + b3 * coef[3, i]
                t[s, j] = ts
                sq = ts * ts
                tp = top[j]
                top[j] = sq if s == 0 else (tp if tp != tp else (sq if not (sq <= tp) else tp))   # NaN wins
                ssum[j] += d * sq
                xw[j] += qws * sq
                xh[j] += qhs * sq
                br = brush[i]
                extra = (br if ts > 0.0 else (-br if ts < 0.0 else 0.0)) if br > 0.0 else 0.0
                v = abs(rho[i] * ts + extra + emf[i] * w) + emf[i] * h
                nn = n0[j]
                n0[j] = v if (nn != nn or v > nn) else nn                       # NaN never wins
        # the copper loss per (N·m)² through the network, R and Kt at ambient: the cycle start, then
        # every segment end (the highest and the lowest are at one of them)
        for j in range(size):
            ends[0, j], peak[j], low[j] = xw[j], xw[j], xw[j]
        for s in range(n_seg):
            a11, a12, a21, a22, gw, gh = e11[m, s], e12[m, s], e21[m, s], e22[m, s], hw[m, s], hh[m, s]
            for j in range(size):
                sq = t[s, j] * t[s, j]
                nw = a11 * xw[j] + a12 * xh[j] + gw * sq
                xh[j] = a21 * xw[j] + a22 * xh[j] + gh * sq
                xw[j] = nw
                ends[s + 1, j] = nw
                pk, lw = peak[j], low[j]
                peak[j] = pk if pk != pk else (nw if not (nw <= pk) else pk)
                low[j] = lw if lw != lw else (nw if not (nw >= lw) else lw)
        for j in range(size):
            i = i0 + j
            sq_top[i], sq_rms[i], need_cold[i] = top[j], ssum[j] / period, n0[j]
            hi[j], lo[j], grown[j] = np.nan, -np.inf, 1.0
            if usable[i]:
                fi, sc, ai, bi = f[i], scale[i], a[i], b[i]
                hi[j] = offset_rise(peak[j] * sc, fi * (up_w[m] if at_w[i] else up_h[m]), ai, bi)
                # the lower bracket: every copper loss at the s of the cycle's coolest winding temperature
                # (a single pass starts at ambient: s = 1), the no-load loss's exact rise at each end
                if repeat:
                    floor = offset_rise(low[j] * sc, fi * (low_w[m] if at_w[i] else low_h[m]), ai, bi)
                    if math.isfinite(floor):
                        grown[j] = (1.0 + ai * floor) / (1.0 + bi * floor) ** 2
                    else:
                        grown[j], lo[j] = np.nan, np.inf
        for k in range(n_seg + 1):
            nlw, nlh = ends_w[k, m], ends_h[k, m]
            for j in range(size):
                i = i0 + j
                y = ends[k, j] * scale[i] * grown[j] + f[i] * (nlw if at_w[i] else nlh)
                cur = lo[j]
                lo[j] = cur if (cur != cur or cur == np.inf) else (y if (k == 0 or not (y <= cur)) else cur)
        # the needed voltage in the hot corner at each bracket, capped at the winding's limit (at the
        # limit where the rise is unknown or runaway): the larger of cold and hot per segment, the largest
        # over segments (NaN never wins, as np.fmax)
        for j in range(size):
            i = i0 + j
            if not usable[i]:
                lo[j] = np.nan
            cap = limit[i]
            y1 = hi[j] if usable[i] and hi[j] < cap else cap
            y2 = lo[j] if usable[i] and lo[j] < cap else cap
            rh, em, ai, bi = rho[i], emf[i], a[i], b[i]
            rh1[j], em1[j] = rh * (1.0 + ai * y1) / (1.0 + bi * y1), em * (1.0 + bi * y1)
            rh2[j], em2[j] = rh * (1.0 + ai * y2) / (1.0 + bi * y2), em * (1.0 + bi * y2)
            n1[j], n2[j] = n0[j], n0[j]
            upper[i], lower[i] = hi[j], lo[j]
        for s in range(n_seg):
            w, h = w_mid[s], half_span[s]
            for j in range(size):
                i = i0 + j
                ts = t[s, j]
                br = brush[i]
                extra = (br if ts > 0.0 else (-br if ts < 0.0 else 0.0)) if br > 0.0 else 0.0
                v = abs(rh1[j] * ts + extra + em1[j] * w) + em1[j] * h
                nn = n1[j]
                n1[j] = v if (nn != nn or v > nn) else nn
                v = abs(rh2[j] * ts + extra + em2[j] * w) + em2[j] * h
                nn = n2[j]
                n2[j] = v if (nn != nn or v > nn) else nn
        for j in range(size):
            need_upper[i0 + j], need_lower[i0 + j] = n1[j], n2[j]
        i0 = i1


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
