"""Vectorised evaluation of candidates against a load envelope.

Arrays have shape (N candidates, S segments); candidates are processed in
chunks of :data:`CHUNK` (side by side on :data:`WORKERS` threads) and nothing
loops over candidates.  The physics comes from :mod:`catalog.physics`; this
module only chains it.

Model per segment (speed ramps linearly, so acceleration, motor torque and
current are constant within a segment; voltage is linear in speed and so
extreme at a segment end):

* gear output torque  T_out = T_load + J_load·α_load  [N·m];
* motor shaft torque  T_m = (J_rotor + J_gear)·n·α + T_out/(n·η) where the
  motor drives (T_out·ω_load ≥ 0), T_out·η/n where the load drives and the
  envelope allows back-driving (``load.back_drive``), as
  :func:`catalog.physics.required_motor_torque`;
* electromagnetic torque  T_em = T_m + T_f·sign(ω)  (friction opposes motion;
  none at standstill);
* current I = T_em/Kt(T); voltage V = R(T)·I + Ke(T)·ω at both segment ends,
  needed |V| (inductive drop L·dI/dt neglected: currents are constant within
  a segment), in two corners: cold (winding and magnet at ambient: the
  strongest back-EMF) and hot (at the peak winding temperature: highest R,
  lowest Kt); the worse counts.  Currents are taken hot (largest).

Winding temperature: the copper losses P = I²·R with R and Kt held at the
peak winding temperature of the cycle (the conservative reading, exact for a
steady state) drive the two-node network at the envelope ambient.  The
losses then scale with one factor s(T) = R(T)/Kt(T)² (relative to ambient),
so the network is solved once with the losses at ambient
(:func:`catalog.physics.network_peak_rise`: periodic state of a repeated
cycle, one pass from cold otherwise, exact interior maxima) and the peak
temperature follows from a scalar fixed point per candidate
(:func:`catalog.physics.hot_winding_rise`; no fixed point is thermal
runaway).  A repeated cycle shorter than :data:`SHORT_PERIOD` of the winding
time constant is judged by its mean loss (the RMS current); operating points
by the steady state of the hottest continuous point.  The network's maps
depend on the motor only, so they are built once per motor of a chunk.
"""
from __future__ import annotations

__all__ = ["evaluate", "evaluate_all", "CHUNK", "WORKERS", "SHORT_PERIOD", "FALLBACK_TEMPERATURE"]

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ..physics import (energy_per_cycle, hot_winding_rise, network_peak_rise, network_segment_maps,
                       resistance_at_temperature, torque_constant_at_temperature)
from ..physics.network import NetworkMaps

CHUNK = 16384            #: candidates per chunk [-]
SHORT_PERIOD = 0.02      #: period/τ_w below which a repeated cycle is judged by its mean loss [1]
WORKERS = max(1, min(4, os.cpu_count() or 1))  #: chunks evaluated at once (threads) [-]
FALLBACK_TEMPERATURE = 428.15  #: winding temperature assumed where thermal data is missing [K]

THERMAL_FIELDS = ("Rth1", "Rth2", "Tmax")
CYCLE_THERMAL_FIELDS = ("tau_w", "tau_m")


def _segments(env) -> dict:
    """What every candidate shares: the load side of each segment (S,) arrays."""
    dur = env.duration
    w0, w1 = env.speed_start, env.speed_end
    cycle = env.mode == "cycle"
    alpha = (w1 - w0) / dur if cycle else np.zeros_like(w0)
    w_mid = (w0 + w1) / 2.0
    t_out = env.torque + env.load_inertia * alpha                     # signed, at the gear output
    driving = np.sign(t_out) * np.sign(w_mid) >= 0.0
    w_abs = np.fmax(np.abs(w0), np.abs(w1))
    out_abs = np.abs(t_out)
    if cycle:
        out_rms = float(np.sqrt(np.sum(out_abs * out_abs * dur) / np.sum(dur)))
    else:
        out_rms = float(np.max(out_abs[env.continuous])) if env.continuous.any() else 0.0
    return {"dur": dur, "w0": w0, "w1": w1, "alpha": alpha, "friction_sign": np.sign(w_mid),
            "out_drive": np.where(driving, t_out, 0.0), "out_back": np.where(driving, 0.0, t_out),
            "t_out_abs": out_abs, "out_rms": out_rms, "speed_seg": int(np.argmax(w_abs)),
            "w_abs_max": float(np.max(w_abs)), "gear_out_seg": int(np.argmax(out_abs))}


def _motor_runs(motor_ix):
    """(first row of each run of one motor, run lengths) of a chunk."""
    starts = np.flatnonzero(np.r_[True, motor_ix[1:] != motor_ix[:-1]])
    return starts, np.diff(np.r_[starts, len(motor_ix)])


def _cold_rise(env, c, loss, usable):
    """Peak winding rise [K] with the losses at ambient constants, (N,); NaN where unusable."""
    n = len(loss)
    rth = c["Rth1"] + c["Rth2"]
    out = np.full(n, np.nan)
    if env.mode == "points":
        cont = env.continuous
        worst = np.max(loss[:, cont], axis=1) if cont.any() else np.zeros(n)
        return np.where(usable, worst * rth, np.nan)
    dur = env.duration
    mean_rule = env.repeat & (env.period < SHORT_PERIOD * c["tau_w"])
    out[usable & mean_rule] = ((loss @ dur) / env.period * rth)[usable & mean_rule]
    net = usable & ~mean_rule
    if not net.any():
        return out
    ix = np.flatnonzero(net)
    sub = loss[ix]
    starts, runs = _motor_runs(c["motor_ix"][ix])
    first = ix[starts]
    maps = network_segment_maps(dur, c["Rth1"][first], c["Rth2"][first], c["tau_w"][first],
                                c["tau_m"][first], periodic=bool(env.repeat))
    if np.all(runs == runs[0]):     # a regular block (motor × ratios): the maps broadcast, no gather
        grid = NetworkMaps(*(a[:, None] if a.ndim > 1 else a for a in maps))
        peak = network_peak_rise(sub.reshape(len(starts), int(runs[0]), -1), grid).reshape(-1)
    else:
        owner = np.repeat(np.arange(len(starts)), runs)
        peak = network_peak_rise(sub, NetworkMaps(*(a[owner] if a.ndim > 1 else a for a in maps)))
    out[ix] = peak
    return out


def evaluate(env, c: dict, detail: bool = False, energy: bool = True, seg: dict | None = None) -> dict:
    """Evaluate one chunk of candidates.

    Parameters
    ----------
    env : Envelope
        The load envelope (SI).
    c : dict
        Candidate arrays of one chunk (see :func:`build_candidates`).
    detail : bool
        Also return the (N, S) segment arrays (for explanations).
    energy : bool
        Also compute the energy per cycle (else NaN; a selection computes it
        for the rows it shows).
    seg : dict, optional
        The shared segment arrays of ``env`` (computed when not given).

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
    seg = _segments(env) if seg is None else seg
    n = len(c["R"])
    ta = env.ambient_temperature
    ratio, eta = c["ratio"], c["eta"]
    back = eta if env.back_drive else 1.0 / eta
    t_m = (np.multiply.outer((c["J"] + c["Jg"]) * ratio, seg["alpha"])
           + np.multiply.outer(1.0 / (ratio * eta), seg["out_drive"])
           + np.multiply.outer(back / ratio, seg["out_back"]))
    t_em = t_m + np.multiply.outer(c["Tf"], seg["friction_sign"])
    t_sq = t_em * t_em

    # cold constants and the losses at ambient
    r_amb = resistance_at_temperature(c["R"], ta, c["Tref"])
    kt_amb = torque_constant_at_temperature(c["Kt"], ta, c["beta"], c["Tref"])
    ke_amb = torque_constant_at_temperature(c["Ke"], ta, c["beta"], c["Tref"])
    fields = THERMAL_FIELDS + (CYCLE_THERMAL_FIELDS if env.mode == "cycle" else ())
    missing = np.zeros(n, bool)
    for name in fields:
        missing |= np.isnan(c[name])
    usable = ~missing & (r_amb > 0) & (kt_amb > 0)
    loss = t_sq * (r_amb / (kt_amb * kt_amb))[:, None]
    rise = _cold_rise(env, c, loss, usable)
    # the hot fixed point: R and Kt at the peak winding temperature
    slope_r = resistance_at_temperature(c["R"], ta + 1.0, c["Tref"]) - r_amb
    slope_k = torque_constant_at_temperature(c["Kt"], ta + 1.0, c["beta"], c["Tref"]) - kt_amb
    hot = hot_winding_rise(rise, slope_r / r_amb, slope_k / kt_amb)
    runaway = usable & np.isinf(hot)
    fallback = np.where(np.isnan(c["Tmax"]), FALLBACK_TEMPERATURE, c["Tmax"])
    tw_eval = np.where(usable & ~runaway, ta + hot, fallback)
    reported = np.where(missing, np.nan, np.where(runaway, np.inf, ta + hot))

    r_hot = resistance_at_temperature(c["R"], tw_eval, c["Tref"])
    kt_hot = torque_constant_at_temperature(c["Kt"], tw_eval, c["beta"], c["Tref"])
    ke_hot = torque_constant_at_temperature(c["Ke"], tw_eval, c["beta"], c["Tref"])
    w0, w1 = seg["w0"], seg["w1"]
    corners = []
    for r, kt, ke in ((r_amb, kt_amb, ke_amb), (r_hot, kt_hot, ke_hot)):
        drop = t_em * (r / kt)[:, None]                   # R·I
        emf = ke * ratio
        corners.append((drop + np.multiply.outer(emf, w0), drop + np.multiply.outer(emf, w1)))
    (vc0, vc1), (vh0, vh1) = corners
    cold_need = np.fmax(np.abs(vc0), np.abs(vc1))
    hot_need = np.fmax(np.abs(vh0), np.abs(vh1))
    v_need = np.fmax(cold_need, hot_need)
    v_seg = np.argmax(np.where(np.isnan(v_need), -np.inf, v_need), axis=1)
    rows = np.arange(n)
    need = v_need[rows, v_seg]
    avail = env.available_voltage
    hot_worse = hot_need[rows, v_seg] >= cold_need[rows, v_seg]
    at0 = np.fmax(np.abs(vh0[rows, v_seg]), np.abs(vc0[rows, v_seg]))
    at1 = np.fmax(np.abs(vh1[rows, v_seg]), np.abs(vc1[rows, v_seg]))
    end_speed = ratio * np.where(at0 >= at1, np.abs(w0[v_seg]), np.abs(w1[v_seg]))

    t_abs = np.sqrt(t_sq)
    ipk_seg = np.argmax(np.where(np.isnan(t_abs), -np.inf, t_abs), axis=1)
    peak_current = t_abs[rows, ipk_seg] / kt_hot
    if env.mode == "cycle":
        i_rms = np.sqrt((t_sq @ env.duration) / env.period) / kt_hot
    else:
        cont = env.continuous
        i_rms = (np.max(t_abs[:, cont], axis=1) / kt_hot) if cont.any() else np.zeros(n)
    e = np.full(n, np.nan)
    if energy and env.mode == "cycle":
        i_hot = t_em / kt_hot[:, None]
        i_abs = np.abs(i_hot)
        e = energy_per_cycle(vh0 * i_hot + env.drive_voltage_drop * i_abs, env.duration,
                             vh1 * i_hot + env.drive_voltage_drop * i_abs, regenerative=env.regenerative)
    out = {
        "winding_temperature": reported, "runaway": runaway, "thermal_missing": missing,
        "rms_current": i_rms, "peak_current": peak_current, "peak_current_seg": ipk_seg,
        "voltage_seg": v_seg, "voltage_margin": (avail - need) / avail, "voltage_need": need,
        "voltage_speed": end_speed, "voltage_hot": hot_worse,
        "motor_speed": ratio * seg["w_abs_max"], "speed_seg": np.full(n, seg["speed_seg"]),
        "gear_out_peak": np.full(n, seg["t_out_abs"][seg["gear_out_seg"]]),
        "gear_out_seg": np.full(n, seg["gear_out_seg"]), "gear_out_rms": np.full(n, seg["out_rms"]),
        "energy_per_cycle": e,
    }
    if detail:
        out.update(seg_motor_torque=t_m, seg_em_torque=t_em, seg_current=t_em / kt_hot[:, None],
                   seg_voltage=v_need, seg_speed_start=np.multiply.outer(ratio, w0),
                   seg_speed_end=np.multiply.outer(ratio, w1),
                   seg_gear_torque=np.broadcast_to(seg["t_out_abs"], t_m.shape), seg_hot_worse=hot_need >= cold_need)
    return out


def _chunk_starts(motor_ix, total: int) -> list:
    """Chunk boundaries near every CHUNK rows, moved to the start of a motor's run (so a
    regular block of motor × ratios stays whole and its thermal maps broadcast)."""
    if total <= CHUNK:
        return [0]
    run_starts = np.flatnonzero(np.r_[True, motor_ix[1:] != motor_ix[:-1]])
    cuts = np.searchsorted(run_starts, np.arange(0, total, CHUNK))
    starts = np.unique(run_starts[np.minimum(cuts, len(run_starts) - 1)])
    return [int(s) for s in starts]


def evaluate_all(env, cand: dict, energy: bool = True) -> dict:
    """:func:`evaluate` over every candidate, chunk by chunk; (N,) arrays only."""
    total = len(cand["id"])
    if not total:
        return {}
    seg = _segments(env)
    starts = _chunk_starts(np.asarray(cand["motor_ix"]), total)
    bounds = list(zip(starts, starts[1:] + [total]))
    run = (lambda b: evaluate(env, {k: v[b[0]:b[1]] for k, v in cand.items()}, energy=energy, seg=seg))
    workers = min(len(bounds), WORKERS)
    if workers > 1:   # numpy releases the GIL inside its array loops: chunks run side by side
        with ThreadPoolExecutor(max_workers=workers) as pool:
            pieces = list(pool.map(run, bounds))
    else:
        pieces = [run(b) for b in bounds]
    return {k: np.concatenate([p[k] for p in pieces]) for k in pieces[0]}
