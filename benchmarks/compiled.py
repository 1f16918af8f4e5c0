"""The selection's verdict model as one compiled kernel (numba): the honest speed limit of the selection.

Per candidate (motor × ratio), in one pass with no temporary arrays: the electromagnetic torque of
every segment (acceleration of rotor and load through the ratio, gear efficiency by the direction
of power flow, friction), the no-load loss T_f·n·|ω| (friction and iron) at each segment's fastest
speed, the two-node network in its periodic state from the motor's per-watt segment maps (the
copper loss per (N·m)² and the no-load loss swept separately; their peaks add, an upper bound as in
the project's verdict pass), the hot fixed point y = s(y)·θ_cu + θ_nl with s = R(θ)/Kt(θ)²
relative to ambient (Newton from the left), the needed voltage |R/Kt·T + Ke·n·ω| at both ends of
every segment in the cold corner and the hot one (the winding at its peak, capped at its limit),
peak and RMS current at the hot torque constant against the drive's limits, the winding limit and
the motor's speed limit.

What it leaves out, all in its own favour: the project also solves the winding temperature exactly
(R and Kt following the winding at every instant) for the candidates whose verdict the brackets
leave open, builds the candidates from the catalogue, checks data, sizes and prices, counts every
rejection and ranks; this kernel reads prepared arrays and returns pass/fail.

numba is a dependency of the project (its own verdict pass of large selections is compiled too,
:mod:`catalog.select.kernel`).  The compiled code is cached next to this file, and the first call
(compilation) is never timed.
"""
from __future__ import annotations

import numpy as np

_KERNEL = None


def _build():
    import numba

    @numba.njit(cache=True, inline="always")
    def offset_rise(cold, offset, a, b):
        """Smallest y ≥ offset with y = offset + s(offset)·cold·(1 + a'·z)/(1 + b'·z)², z = y − offset."""
        ka, kb = 1.0 + a * offset, 1.0 + b * offset
        if kb <= 0.0:
            return np.inf
        phi = cold * ka / (kb * kb)
        a2, b2 = a / ka, b / kb
        if phi <= 0.0:
            return offset
        z = 0.0
        for _ in range(80):
            k = 1.0 + b2 * z
            if k <= 0.0:
                return np.inf
            g = phi * (1.0 + a2 * z) / (k * k) - z
            if abs(g) <= 1e-9 * (1.0 + z):
                return offset + z
            slope = phi * (a2 / (k * k) - 2.0 * b2 * (1.0 + a2 * z) / (k * k * k)) - 1.0
            if slope >= 0.0:          # G no longer falls while positive: no root (runaway)
                return np.inf
            z -= g / slope
        return np.inf

    @numba.njit(parallel=True, cache=True, fastmath=False)
    def kernel(r_amb, kt_amb, a, b, inertia, friction, t_max, w_max,
               e11, e12, e21, e22, hw, hh, qw, qh,
               ratios, eta, alpha, t_out, driving, fsign, w0, w1, dur,
               ta, available, peak_limit, rms_limit, period, w_abs_max, out):
        n_motors, n_ratios, n_seg = r_amb.shape[0], ratios.shape[0], dur.shape[0]
        for i in numba.prange(n_motors):
            t = np.empty(n_seg)
            nl = np.empty(n_seg)
            scale = r_amb[i] / (kt_amb[i] * kt_amb[i])
            for j in range(n_ratios):
                n, e = ratios[j], eta[j]
                sq_top, sq_sum = 0.0, 0.0
                xw_cu, xh_cu, xw_nl, xh_nl = 0.0, 0.0, 0.0, 0.0
                for s in range(n_seg):
                    through = t_out[s] / (n * e) if driving[s] else t_out[s] * e / n
                    tq = inertia[i] * n * alpha[s] + through + friction[i] * fsign[s]
                    t[s] = tq
                    sq = tq * tq
                    sq_top = max(sq_top, sq)
                    sq_sum += sq * dur[s]
                    nl[s] = friction[i] * n * max(abs(w0[s]), abs(w1[s]))
                    xw_cu += qw[i, s] * sq                       # the periodic state at the cycle start
                    xh_cu += qh[i, s] * sq
                    xw_nl += qw[i, s] * nl[s]
                    xh_nl += qh[i, s] * nl[s]
                peak_cu, peak_nl = xw_cu, xw_nl
                for s in range(n_seg):
                    sq = t[s] * t[s]
                    xw_cu, xh_cu = (e11[i, s] * xw_cu + e12[i, s] * xh_cu + hw[i, s] * sq,
                                    e21[i, s] * xw_cu + e22[i, s] * xh_cu + hh[i, s] * sq)
                    xw_nl, xh_nl = (e11[i, s] * xw_nl + e12[i, s] * xh_nl + hw[i, s] * nl[s],
                                    e21[i, s] * xw_nl + e22[i, s] * xh_nl + hh[i, s] * nl[s])
                    peak_cu = max(peak_cu, xw_cu)
                    peak_nl = max(peak_nl, xw_nl)
                rise = offset_rise(peak_cu * scale, peak_nl, a[i], b[i])
                ok = np.isfinite(rise) and ta + rise <= t_max[i]
                hot = min(rise, t_max[i] - ta) if np.isfinite(rise) else t_max[i] - ta
                s_r, s_k = 1.0 + a[i] * hot, 1.0 + b[i] * hot
                kt_hot = kt_amb[i] * s_k
                for corner in range(2):
                    rr = 1.0 if corner == 0 else s_r
                    kk = 1.0 if corner == 0 else s_k
                    rho = r_amb[i] / kt_amb[i] * rr / kk
                    kap = kt_amb[i] * kk * n
                    for s in range(n_seg):
                        v = max(abs(rho * t[s] + kap * w0[s]), abs(rho * t[s] + kap * w1[s]))
                        if v > available:
                            ok = False
                ok = ok and np.sqrt(sq_top) / kt_hot <= peak_limit
                ok = ok and np.sqrt(sq_sum / period) / kt_hot <= rms_limit
                ok = ok and n * w_abs_max <= w_max[i]
                out[i, j] = ok

    return kernel


def compiled_kernel():
    """The compiled kernel (built on first use; raises ImportError without numba)."""
    global _KERNEL
    if _KERNEL is None:
        _KERNEL = _build()
    return _KERNEL


def prepare(terms: dict, env, ratios, eta) -> tuple:
    """The kernel's arguments from the per-motor terms (``bench_select._motor_terms``) and the envelope."""
    w0, w1 = env.speed_start, env.speed_end
    alpha = (w1 - w0) / env.duration
    t_out = env.torque + env.load_inertia * alpha
    w_mid = (w0 + w1) / 2
    driving = np.sign(t_out) * np.sign(w_mid) >= 0
    maps = terms["maps"]
    f = np.ascontiguousarray
    return (f(terms["r"]), f(terms["kt"]), f(terms["a"]), f(terms["b"]), f(terms["J"]), f(terms["tf"]),
            f(terms["tmax"]), f(terms["wmax"]),
            *(f(getattr(maps, k)) for k in ("e11", "e12", "e21", "e22", "hw", "hh", "qw", "qh")),
            f(ratios), f(eta), f(alpha), f(t_out), f(driving), f(np.sign(w_mid)), f(w0), f(w1), f(env.duration),
            float(env.ambient_temperature), float(env.available_voltage), float(env.drive_peak_current),
            float(env.drive_continuous_current), float(env.period),
            float(np.max(np.maximum(np.abs(w0), np.abs(w1)))))


def run(terms: dict, env, ratios, eta) -> np.ndarray:
    """Pass (True) or fail of every motor × ratio, (M, R)."""
    out = np.zeros((len(terms["r"]), len(ratios)), dtype=np.bool_)
    compiled_kernel()(*prepare(terms, env, ratios, eta), out)
    return out
