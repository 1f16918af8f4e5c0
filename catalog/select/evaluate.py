"""Vectorised evaluation of candidates against a load envelope.

Arrays have shape (N candidates, S segments); candidates are processed in
chunks of :data:`CHUNK` and nothing loops over candidates.  The physics comes
from :mod:`catalog.physics`; this module only chains it.

Model per segment (speed ramps linearly, so acceleration, motor torque and
current are constant within a segment; voltage is linear in speed and so
extreme at a segment end):

* gear output torque  T_out = T_load + J_load·α_load  [N·m];
* motor shaft torque  T_m = (J_rotor + J_gear)·n·α + T_out/(n·η) where the
  motor drives (T_out·ω_load ≥ 0), T_out·η/n where the load drives and the
  envelope allows back-driving (``load.back_drive``), via
  :func:`catalog.physics.required_motor_torque`;
* electromagnetic torque  T_em = T_m + T_f·sign(ω)  (friction opposes motion;
  none at standstill);
* current I = T_em/Kt(T_magnet); voltage V = R(T_w)·I + Ke(T_magnet)·ω at both
  segment ends, needed |V| (inductive drop L·dI/dt neglected: currents are
  constant within a segment);
* winding temperature from the two-node network at the envelope ambient:
  repeated cycle → periodic peak (:func:`periodic_winding_temperature`), or the
  steady state at the RMS current when the period is below
  :data:`SHORT_PERIOD` of the winding time constant; single pass →
  :func:`transient_winding_temperature` from cold; operating points → steady
  state of each continuous point, the hottest counts.

Thermal coupling: Kt falls as the magnet warms, so current and temperature
depend on each other.  The magnet is taken at the (peak) winding temperature,
the conservative choice.  A fixed-point iteration T_w → Kt(T_w) → I → T_w
(the thermal functions already solve R(T_w) exactly) runs until every change
is below :data:`TOLERANCE_K`; no steady state (``inf``), Kt ≤ 0 or no
convergence in :data:`MAX_ITERATIONS` is thermal runaway.  The iteration is
accelerated by secant steps that cannot pass the root (G = F − T is convex),
starts from an exact lower bound, and a repeated cycle whose RMS lower bound
already has no fixed point is runaway without any transient
(:func:`_rms_screen`); only candidates still moving are evaluated again.

Voltage is checked in two corners, cold (winding and magnet at ambient: the
strongest back-EMF) and hot (converged temperature: highest R, lowest Kt), the
worse one counts.  Currents are taken hot (largest).
"""
from __future__ import annotations

__all__ = ["evaluate", "evaluate_all", "CHUNK", "WORKERS", "SHORT_PERIOD", "TOLERANCE_K", "MAX_ITERATIONS"]

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ..physics import (energy_per_cycle, periodic_winding_temperature, required_motor_torque,
                       resistance_at_temperature, rms, steady_winding_temperature,
                       torque_constant_at_temperature, transient_winding_temperature)

CHUNK = 16384            #: candidates per chunk [-]
BLOCK = 4096             #: candidates per call of the periodic transient kernel (cache-sized) [-]
SHORT_PERIOD = 0.02      #: period/τ_w below which the steady state at RMS current is used [1]
TOLERANCE_K = 0.01       #: fixed-point convergence of the winding temperature [K]
MAX_ITERATIONS = 100     #: fixed-point iterations before declaring runaway [-]
WORKERS = max(1, min(4, os.cpu_count() or 1))  #: chunks evaluated at once (threads) [-]
_SCREEN_STEPS = 8        # plain iterations of the RMS lower bound (any number keeps it a lower bound)
FALLBACK_TEMPERATURE = 428.15  #: winding temperature assumed where thermal data is missing [K]

THERMAL_FIELDS = ("Rth1", "Rth2", "Tmax")
CYCLE_THERMAL_FIELDS = ("tau_w", "tau_m")


def _thermal(env, c, current):
    """Winding temperature [K], shape (N,), for currents (N, S) [A]."""
    i = np.abs(current)
    ta = env.ambient_temperature
    args = (c["R"], c["Rth1"], c["Rth2"])
    if env.mode == "points":
        cont = env.continuous
        if not cont.any():
            return np.full(len(i), ta)
        steady = steady_winding_temperature(i[:, cont], c["R"][:, None], c["Rth1"][:, None],
                                            c["Rth2"][:, None], ta, c["Tref"][:, None])
        return np.max(steady, axis=1)
    dur = env.duration
    if not env.repeat:
        return transient_winding_temperature(dur, i, *args, c["tau_w"], c["tau_m"], ta, c["Tref"])
    i_rms = rms(i, dur)
    out = steady_winding_temperature(i_rms, *args, ta, c["Tref"])
    long = ~(env.period < SHORT_PERIOD * c["tau_w"])  # the transient only where the cycle is long
    ix_all = np.flatnonzero(long)
    for s in range(0, len(ix_all), BLOCK):  # blocks that stay in cache: the kernel is memory bound
        ix = ix_all[s:s + BLOCK]
        out[ix] = periodic_winding_temperature(dur, i[ix], c["R"][ix], c["Rth1"][ix], c["Rth2"][ix],
                                               c["tau_w"][ix], c["tau_m"][ix], ta, c["Tref"][ix])
    return out


def _hot_constants(c, temperature):
    """(R [Ω], Kt [N·m/A], Ke [V·s/rad]) with winding and magnet at ``temperature`` [K]."""
    r = resistance_at_temperature(c["R"], temperature, c["Tref"])
    kt = torque_constant_at_temperature(c["Kt"], temperature, c["beta"], c["Tref"])
    ke = torque_constant_at_temperature(c["Ke"], temperature, c["beta"], c["Tref"])
    return r, kt, ke


def _solve_temperature(env, c, t_em, missing):
    """Fixed point of winding temperature and hot torque constant (vectorised).

    F(T) = winding temperature with the magnet (Kt) at T is increasing and
    convex in T (the currents scale with 1/Kt(T), Kt linear in T; the
    network's response to a heat input scaled by s is a power series in s
    with non-negative coefficients, since the network is cooperative).  So
    G(T) = F(T) − T is convex with G(Ta) ≥ 0, and secant steps from the left
    on G never pass its smallest root T* (the one plain iteration
    T → F(T) from ambient converges to); each step takes the larger of the
    secant and the plain step, both ≤ T*.  A secant slope ≥ 0 means G no
    longer falls, hence has no root: runaway, found in a few evaluations
    instead of :data:`MAX_ITERATIONS`.  Convergence as before: |F(T) − T| <
    :data:`TOLERANCE_K`, and F(T) is reported.
    """
    n = len(t_em)
    ta = env.ambient_temperature
    fallback = np.where(np.isnan(c["Tmax"]), FALLBACK_TEMPERATURE, c["Tmax"])
    tw = np.full(n, ta)                 # current point x
    x_prev = np.full(n, np.nan)
    g_prev = np.full(n, np.nan)
    active = ~missing
    runaway = np.zeros(n, bool)
    if env.mode == "cycle" and env.repeat and n:
        start, hopeless = _rms_screen(env, c, t_em)
        runaway |= active & hopeless
        active &= ~hopeless
        tw = np.where(active, start, tw)
    iterations = 0
    while active.any() and iterations < MAX_ITERATIONS:
        iterations += 1
        ix = np.flatnonzero(active)  # only the candidates still moving are evaluated again
        sub = {k: (v[ix] if isinstance(v, np.ndarray) and v.shape[:1] == (n,) else v) for k, v in c.items()}
        x = tw[ix]
        kt = torque_constant_at_temperature(sub["Kt"], x, sub["beta"], sub["Tref"])
        bad_kt = kt <= 0
        new = _thermal(env, sub, t_em[ix] / np.where(bad_kt, np.nan, kt)[:, None])
        blown = ~np.isfinite(new) | bad_kt
        g = new - x
        done = ~blown & (np.abs(g) < TOLERANCE_K)
        xp, gp = x_prev[ix], g_prev[ix]
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = (g - gp) / (x - xp)
            secant = x - g / slope
        have = np.isfinite(slope) & (slope != 0.0)
        blown |= ~done & have & (slope > 0.0) & (g > 0.0)   # G convex and not falling: no root
        step = np.where(g > 0.0, np.fmax(new, np.where(have, secant, new)),
                        np.where(have, secant, new))         # below the root, or back from above
        runaway[ix[blown]] = True
        keep = ~blown
        x_prev[ix], g_prev[ix] = x, g
        tw[ix[keep]] = np.where(done, new, step)[keep]
        active[ix[blown | done]] = False
    runaway |= active            # not converged: no consistent temperature
    tw_eval = np.where(missing | runaway, fallback, tw)
    reported = np.where(missing, np.nan, np.where(runaway, np.inf, tw))
    return tw_eval, reported, runaway


def _rms_screen(env, c, t_em):
    """(lower bound of the fixed point [K], sure runaway [-]) of a repeated cycle, without the transient.

    In the periodic state the mean of θw over a cycle is Rth·mean(P) (average
    both node equations), P = I²·R(Tw) ≥ I²·R(Ta) because θw ≥ 0 (the network
    is cooperative, its inputs non-negative), and the peak is at least the
    mean: F(T) ≥ L(T) = Ta + Rth·R(Ta)·I_rms(T)², exactly also for the
    short-period steady state.  With k(T) = Kt(T)/Kt = k0 + kb·(T − Ta)
    (linear), y = T − Ta solves y·k(y)² = a, a = Rth·R(Ta)·I_rms(Ta·Kt)².  For
    kb < 0, max y·k² over 0 ≤ y < −k0/kb is −4·k0³/(27·kb): above it L,
    hence F, has no fixed point (sure runaway, no transient needed).
    Otherwise the plain iterates y ← a/k(y)² rise from 0 towards the smallest
    root of L, which is below the smallest root of F; a few of them give a
    start for :func:`_solve_temperature` that is ≤ T* (the secant argument
    needs only that).
    """
    ta = env.ambient_temperature
    r_amb = resistance_at_temperature(c["R"], ta, c["Tref"])
    k0 = torque_constant_at_temperature(1.0, ta, c["beta"], c["Tref"])
    kb = torque_constant_at_temperature(1.0, ta + 1.0, c["beta"], c["Tref"]) - k0
    i_rms = rms(np.abs(t_em), env.duration) / c["Kt"]
    a = (c["Rth1"] + c["Rth2"]) * r_amb * i_rms * i_rms
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        bound = np.where(kb < 0.0, -4.0 * k0 ** 3 / (27.0 * kb), np.inf)
        hopeless = (k0 > 0.0) & (a > bound * (1.0 + 1e-9))
        y = np.zeros_like(a)
        for _ in range(_SCREEN_STEPS):
            k = k0 + kb * y
            y = np.where(k > 0.0, a / (k * k), y)
    y = np.where(np.isfinite(y) & ~hopeless, y, 0.0)
    return ta + y, hopeless


def _argmin_take(values):
    """(index of the smallest entry per row, that entry) of an (N, S) array."""
    filled = np.where(np.isnan(values), np.inf, values)
    ix = np.argmin(filled, axis=1)
    return ix, np.take_along_axis(values, ix[:, None], axis=1)[:, 0]


def evaluate(env, c: dict, detail: bool = False) -> dict:
    """Evaluate one chunk of candidates.

    Parameters
    ----------
    env : Envelope
        The load envelope (SI).
    c : dict
        Candidate arrays of one chunk (see :func:`build_candidates`).
    detail : bool
        Also return the (N, S) segment arrays (for explanations).

    Returns
    -------
    dict
        Per candidate: ``winding_temperature`` [K] (NaN without thermal data,
        inf at runaway), ``runaway`` [-], ``thermal_missing`` [-],
        ``rms_current``/``peak_current`` [A], ``voltage_need``/``voltage_speed``
        (worst segment's needed voltage [V] and motor speed there [rad/s]),
        ``motor_speed`` [rad/s], ``gear_out_peak``/``gear_out_rms`` [N·m],
        ``energy_per_cycle`` [J], segment indices ``*_seg`` and, with
        ``detail``, arrays ``seg_*`` of shape (N, S).
    """
    dur, tl = env.duration, env.torque
    w0, w1 = env.speed_start, env.speed_end
    alpha = (w1 - w0) / dur if env.mode == "cycle" else np.zeros_like(w0)
    w_mid = (w0 + w1) / 2.0
    n, eta = c["ratio"][:, None], c["eta"][:, None]
    back = eta if env.back_drive else 1.0 / eta
    t_m = required_motor_torque(tl, w_mid, alpha, n, eta, c["J"][:, None], c["Jg"][:, None],
                                env.load_inertia, back)
    t_em = t_m + c["Tf"][:, None] * np.sign(w_mid)
    wm0, wm1 = n * w0, n * w1
    t_out = np.abs(tl + env.load_inertia * alpha)                     # (S,)

    fields = THERMAL_FIELDS + (CYCLE_THERMAL_FIELDS if env.mode == "cycle" else ())
    missing = np.zeros(len(t_m), bool)
    for name in fields:
        missing |= np.isnan(c[name])
    tw_eval, tw_report, runaway = _solve_temperature(env, c, t_em, missing)

    corners = []
    for temp in (np.full(len(t_m), env.ambient_temperature), tw_eval):
        r, kt, ke = _hot_constants(c, temp)
        cur = t_em / kt[:, None]
        v0 = r[:, None] * cur + ke[:, None] * wm0
        v1 = r[:, None] * cur + ke[:, None] * wm1
        corners.append((cur, v0, v1))
    (_, vc0, vc1), (i_hot, vh0, vh1) = corners
    v_need = np.fmax(np.fmax(np.abs(vc0), np.abs(vc1)), np.fmax(np.abs(vh0), np.abs(vh1)))
    hot_worse = np.fmax(np.abs(vh0), np.abs(vh1)) >= np.fmax(np.abs(vc0), np.abs(vc1))
    end_speed = np.where(np.fmax(np.abs(vh0), np.abs(vc0)) >= np.fmax(np.abs(vh1), np.abs(vc1)),
                         np.abs(wm0), np.abs(wm1))
    w_abs = np.fmax(np.abs(wm0), np.abs(wm1))
    avail = env.available_voltage
    v_seg, v_worst = _argmin_take((avail - v_need) / avail)
    i_abs = np.abs(i_hot)
    ipk_seg, _ = _argmin_take(-i_abs)
    spd_seg, _ = _argmin_take(-w_abs)
    tq_seg = int(np.argmax(t_out))
    if env.mode == "cycle":
        i_rms = rms(i_hot, dur)
        t_out_rms = rms(t_out, dur)
        power0 = vh0 * i_hot + env.drive_voltage_drop * i_abs
        power1 = vh1 * i_hot + env.drive_voltage_drop * i_abs
        energy = energy_per_cycle(power0, dur, power1, regenerative=env.regenerative)
    else:
        cont = env.continuous
        i_rms = np.max(i_abs[:, cont], axis=1) if cont.any() else np.zeros(len(i_abs))
        t_out_rms = float(np.max(t_out[cont])) if cont.any() else 0.0
        energy = np.full(len(i_abs), np.nan)
    take = lambda a, ix: np.take_along_axis(a, ix[:, None], axis=1)[:, 0]  # noqa: E731
    out = {
        "winding_temperature": tw_report, "runaway": runaway, "thermal_missing": missing,
        "rms_current": i_rms, "peak_current": take(i_abs, ipk_seg), "peak_current_seg": ipk_seg,
        "voltage_seg": v_seg, "voltage_margin": v_worst, "voltage_need": take(v_need, v_seg),
        "voltage_speed": take(end_speed, v_seg), "voltage_hot": take(hot_worse, v_seg),
        "motor_speed": take(w_abs, spd_seg), "speed_seg": spd_seg,
        "gear_out_peak": np.full(len(i_abs), t_out[tq_seg]), "gear_out_seg": np.full(len(i_abs), tq_seg),
        "gear_out_rms": np.broadcast_to(t_out_rms, i_abs.shape[:1]).astype(float),
        "energy_per_cycle": energy,
    }
    if detail:
        out.update(seg_motor_torque=t_m, seg_em_torque=t_em, seg_current=i_hot, seg_voltage=v_need,
                   seg_speed_start=wm0, seg_speed_end=wm1, seg_gear_torque=np.broadcast_to(t_out, t_m.shape),
                   seg_hot_worse=hot_worse)
    return out


def evaluate_all(env, cand: dict) -> dict:
    """:func:`evaluate` over every candidate, chunk by chunk; (N,) arrays only."""
    total = len(cand["id"])
    starts = range(0, total, CHUNK)
    run = (lambda start: evaluate(env, {k: v[start:start + CHUNK] for k, v in cand.items()}))
    workers = min(len(starts), WORKERS)
    if workers > 1:   # numpy releases the GIL inside its array loops: chunks run side by side
        with ThreadPoolExecutor(max_workers=workers) as pool:
            pieces = list(pool.map(run, starts))
    else:
        pieces = [run(start) for start in starts]
    if not pieces:
        return {}
    return {k: np.concatenate([p[k] for p in pieces]) for k in pieces[0]}
