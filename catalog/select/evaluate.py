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
* current I = T_em/Kt(T); voltage V = R(T)·I + V_brush·sign(I) + Ke(T)·ω at
  both segment ends (the brushes of a brushed motor drop their voltage in the
  direction of the current), needed |V| (inductive drop L·dI/dt neglected:
  currents are constant within a segment), in two corners: cold (winding and
  magnet at ambient: the strongest back-EMF) and hot (at the peak winding
  temperature, at most the winding's limit: highest R, lowest Kt); the worse
  counts.  Currents are taken hot (largest).

Losses: the copper loss I²·R, and the no-load loss T_f·|ω| = Kt·I0·|ω|
(friction and iron, independent of the winding temperature, ramping with
the speed) at the node where it arises
(:func:`catalog.select.candidates.no_load_at_winding`: the winding of a
brushed motor, the housing of a brushless one).

Winding temperature: the losses drive the two-node network at
the envelope ambient with R and Kt following the winding temperature at every
instant: the copper loss scales with s(θ) = R(θ)/Kt(θ)² relative to ambient,
θ the winding rise.  Solved
exactly (:func:`catalog.physics.hot_network_rise`: the loss is affine in the
winding temperature on each step of a segment, so every step has a closed
form; periodic state of a repeated cycle, one pass from cold otherwise; within
a thousandth of a kelvin or so of a direct integration), but only where it
matters, because it costs a matrix exponential per candidate and segment.
Brackets of the peak rise come first: the network is linear, so the rise with
every copper loss at ambient is one product with the motor's response matrix
per ratio (:func:`catalog.physics.network_response`), and the no-load loss's
rise is exact and the same per motor for all its ratios but for the factor
T_f·n (:func:`catalog.physics.network_ramp_rise`, once per motor of the
catalogue); since s grows with θ, every copper loss held at the s of the peak
gives an upper bracket (a scalar fixed point,
:func:`catalog.physics.hot_winding_rise`; none is thermal runaway, the
conservative screen) and every copper loss held at the s of the cycle's
coolest winding temperature (itself bounded from below with the no-load
loss's lowest rise) a lower one, taken at every segment end with the no-load
rise there.  Every verdict moves monotonically with the
peak temperature, so a candidate whose verdicts agree at both brackets is
decided; the others, and every candidate whose numbers are shown (shortlist,
``--explain``, exports, diagrams), get the exact solution.  Operating points:
the steady state of the hottest continuous point, where the fixed point is
exact.  The network's maps depend on the motor only, so they are built once
per motor.
"""
from __future__ import annotations

__all__ = ["evaluate", "at_corners", "checked", "rise_brackets", "evaluate_all", "checked_in_chunks", "chunk_rows",
           "CHUNK",
           "CHUNK_BYTES", "EXACT_CHUNK", "KERNEL_MIN", "KERNEL_CHUNK", "WORKERS", "FALLBACK_TEMPERATURE"]

import math
import os
import threading
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ..physics import (energy_per_cycle, hot_network_rise, network_capacity_maps, network_ramp_rise, network_response,
                       network_rise_path)
from ..physics import network as physics_network
from ..physics import temperature as physics_temperature
from ..physics.network import NetworkMaps

# The physics functions without their container conversion (arrays in, arrays out here): the
# wrapper's checks cost more than the arithmetic on a chunk of a few hundred rows.
hot_winding_rise = physics_network.hot_winding_rise.__wrapped__
resistance_at_temperature = physics_temperature.resistance_at_temperature.__wrapped__
torque_constant_at_temperature = physics_temperature.torque_constant_at_temperature.__wrapped__

CHUNK = 32768            #: candidates per chunk at most [-]
#: Scratch memory of one chunk [bytes]: its (S, N) arrays (about :data:`_SEGMENT_ARRAYS` of
#: them) stay within this whatever the number of segments S, so a chunk holds fewer candidates
#: the longer the cycle (:func:`chunk_rows`).
CHUNK_BYTES = 128 * 2**20
#: The network's response matrices of a chunk's motors ((S + 1) x S each) are used where they fit
#: in this [bytes]; else the network is swept segment by segment (the same numbers).
RESPONSE_BYTES = 64 * 2**20
#: The network maps of every motor of the catalogue (9 arrays of M x S) are built once where they
#: fit in this [bytes]; else each chunk builds those of its own motors.
MAPS_BYTES = 256 * 2**20
_SEGMENT_ARRAYS = 16
_RAMP_ARRAYS = 64        #: (S,) arrays per motor held at once by the no-load loss's exact response, about [-]
#: Candidates from which a selection's verdict pass runs compiled (:mod:`catalog.select.kernel`;
#: the numpy path below it, and always for the numbers shown) [-]
KERNEL_MIN = 200_000
#: Candidates per chunk of the compiled pass (it holds no (S, N) arrays, whatever the segments S;
#: fewer, larger chunks spend less time in the interpreter) [-]
KERNEL_CHUNK = 131072
EXACT_CHUNK = 8192       #: candidates per chunk of the exact winding temperature [-]
WORKERS = max(1, min(4, os.cpu_count() or 1))  #: chunks evaluated at once (threads) [-]
FALLBACK_TEMPERATURE = 428.15  #: winding temperature assumed where thermal data is missing [K]

THERMAL_FIELDS = ("thermal_resistance_winding_housing", "thermal_resistance_housing_ambient",
                  "max_winding_temperature")
#: the candidate columns :func:`evaluate` reads
EVAL_KEYS = ("motor_ix", "terminal_resistance", "torque_constant", "back_emf_constant", "friction_torque",
             "rotor_inertia", "gear_inertia", "thermal_resistance_winding_housing",
             "thermal_resistance_housing_ambient", "thermal_time_constant_winding", "thermal_time_constant_motor",
             "max_winding_temperature", "resistance_reference_temperature", "magnet_coefficient", "ratio",
             "efficiency", "winding_heat_capacity", "housing_heat_capacity", "no_load_at_winding",
             "brush_voltage_drop")
CYCLE_THERMAL_FIELDS = ("thermal_time_constant_winding", "thermal_time_constant_motor")
#: the candidate columns of the two-node network, in the order of :func:`catalog.physics.network_capacity_maps`
#: (the heat capacities are the datasheet's; the housing-to-ambient resistance has the cooling factor)
THERMAL_NETWORK_FIELDS = ("thermal_resistance_winding_housing", "thermal_resistance_housing_ambient",
                          "winding_heat_capacity", "housing_heat_capacity")


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
    fs = np.sign(w_mid)
    basis = np.column_stack([alpha, np.where(driving, t_out, 0.0), np.where(driving, 0.0, t_out), fs])
    return {"dur": dur, "w0": w0, "w1": w1, "alpha": alpha, "friction_sign": fs,
            "basis": np.ascontiguousarray(basis),                        # (S, 4): T_em = basis @ coef
            "voltage_basis": np.ascontiguousarray(np.column_stack([basis, w_mid])), "w_mid": w_mid,
            "half_span": np.abs(w1 - w0) / 2.0,
            "t_out_abs": out_abs, "out_rms": out_rms, "speed_seg": int(np.argmax(w_abs)),
            "w_abs_max": float(np.max(w_abs)), "gear_out_seg": int(np.argmax(out_abs))}


_LOCAL = threading.local()


def _buffer(name: str, shape: tuple) -> np.ndarray:
    """A scratch array of ``shape`` kept per thread and reused chunk after chunk.

    Fresh megabyte-sized arrays come from the operating system page by page,
    and touching a page the first time costs microseconds on a virtual
    machine: on this kind of machine more than the arithmetic on it.  Scratch
    arrays never leave :func:`evaluate`.
    """
    pool = _LOCAL.__dict__.setdefault("buffers", {})
    size = math.prod(shape)
    buf = pool.get(name)
    if buf is None or buf.size < size:
        buf = pool[name] = np.empty(max(size, CHUNK * 32))
    return buf[:size].reshape(shape)


def chunk_rows(n_segments: int) -> int:
    """Candidates per chunk for ``n_segments`` segments: :data:`CHUNK`, fewer where its (S, N)
    arrays would pass :data:`CHUNK_BYTES` (at least 64)."""
    return int(max(64, min(CHUNK, CHUNK_BYTES // (8 * _SEGMENT_ARRAYS * max(1, n_segments)))))


def _motor_runs(motor_ix):
    """(first row of each run of one motor, run lengths) of a chunk."""
    starts = np.flatnonzero(np.r_[True, motor_ix[1:] != motor_ix[:-1]])
    return starts, np.diff(np.r_[starts, len(motor_ix)])


def _no_load_response(env, net, at_winding, workers: int = 1) -> dict:
    """The no-load loss's winding rise per W·s/rad of loss per load speed, per motor (its speed profile
    is the same for all the motor's gear ratios, and the network is linear: a ratio n multiplies it by
    T_f·n), exact (:func:`catalog.physics.network_ramp_rise`: the loss ramps with |ω|, linear within a
    segment since segments are split where the speed changes sign): entering the winding (``_w``) or
    the housing (``_h``), ``ends_*`` (S + 1, M) at the cycle start and every segment end, ``up_*`` and
    ``low_*`` (M,) the highest and the lowest over the cycle, inside segments included.  ``net``
    holds the motors' :data:`THERMAL_NETWORK_FIELDS`, ``at_winding`` (M,) where each motor's no-load
    loss arises (only the nodes in use are solved; the other keys repeat them).  ``workers``: threads
    that solve batches of motors side by side (a catalogue's thousands of motors)."""
    out = {}
    at_winding = np.asarray(at_winding, dtype=bool)
    used = [node for node, any_ in (("winding", at_winding.any()), ("housing", not at_winding.all())) if any_]
    n_motors, n_seg = len(at_winding), len(env.duration)
    batch = max(1, RESPONSE_BYTES // (8 * _RAMP_ARRAYS * n_seg))     # motors solved at once
    if workers > 1 and n_motors >= 1000:
        batch = min(batch, -(-n_motors // workers))
    for node in used:
        k = node[0]
        out["ends_" + k], out["up_" + k], out["low_" + k] = (np.empty((n_seg + 1, n_motors)), np.empty(n_motors),
                                                             np.empty(n_motors))

    def solve(job):
        node, part = job
        k = node[0]
        ramp = network_ramp_rise(env.duration, np.abs(env.speed_start), np.abs(env.speed_end),
                                 *(x[part] for x in net), periodic=bool(env.repeat), node=node)
        out["ends_" + k][:, part], out["up_" + k][part] = ramp.ends, ramp.segment_top.max(axis=0)
        out["low_" + k][part] = ramp.segment_low.min(axis=0)

    jobs = [(node, slice(lo, lo + batch)) for node in used for lo in range(0, n_motors, batch)]
    if workers > 1 and len(jobs) > 1:
        with ThreadPoolExecutor(max_workers=min(workers, len(jobs))) as pool:
            list(pool.map(solve, jobs))
    else:
        for job in jobs:
            solve(job)
    for key in ("ends", "up", "low"):
        for mine, other in (("w", "h"), ("h", "w")):
            out.setdefault(f"{key}_{mine}", out.get(f"{key}_{other}"))
    return out


def _first_top(block, top, axis):
    """Index along ``axis`` of the first element of ``block`` equal to ``top`` (its maximum there)."""
    idx = np.zeros(top.shape, dtype=np.intp)
    for k in range(block.shape[axis] - 1, -1, -1):       # ascending order wins: the loop runs backwards
        idx[np.take(block, k, axis=axis) == top] = k
    return idx


def _cold_range(env, c, t_sq, usable, motor_maps=None, trajectory=False, motor_no_load=None) -> dict:
    """The network with R and Kt at ambient, per candidate ((N,) arrays, NaN where unusable).

    ``peak``/``low``: the highest and the lowest winding rise over the cycle per (N·m)² of T_em²
    (the copper loss then is this times R(Ta)/Kt(Ta)²); both are at a segment end or the cycle start
    (a constant winding loss per segment: see :mod:`catalog.physics.network`) and come from one
    product with each motor's response matrix.  The no-load loss T_f·n·|ω| (friction and iron,
    independent of the winding temperature, ramping with the speed, at its own node): its winding
    rise exactly (:func:`_no_load_response`, one per motor, times T_f·n), ``no_load_up``/
    ``no_load_low`` the highest and the lowest at any instant and ``no_load_at_peak`` at the segment
    end where the copper rise peaks.  ``paths(rows)`` gives both rises at the cycle start and every
    segment end, (S + 1, len(rows)) each, for the candidates at ``rows`` (computed on demand: a few
    candidates need them); with ``trajectory`` they are computed for all, ``path`` and
    ``no_load_path``.  Operating points: the steady states of the continuous points, ``points``
    (P, N) copper and ``no_load_points`` (P, N).
    """
    n = t_sq.shape[1]
    out = {k: np.full(n, np.nan) for k in ("peak", "low", "no_load_up", "no_load_low", "no_load_at_peak")}
    rth1, rth2 = c["thermal_resistance_winding_housing"], c["thermal_resistance_housing_ambient"]
    f = c["friction_torque"] * c["ratio"]                    # no-load loss per rad/s of load speed [W·s/rad]
    at_w = np.asarray(c["no_load_at_winding"], dtype=bool)
    if env.mode == "points":
        cont = env.continuous
        speed = np.abs(env.speed_start[cont])[:, None]
        out["points"] = np.where(usable, t_sq[cont] * (rth1 + rth2), np.nan)
        out["no_load_points"] = np.where(usable, speed * f * np.where(at_w, rth1 + rth2, rth2), np.nan)
        out["peak"] = out["points"].max(axis=0) if cont.any() else np.where(usable, 0.0, np.nan)
        return out
    n_seg = len(env.duration)
    if not usable.any():
        if trajectory:
            out["path"], out["no_load_path"] = np.full((n_seg + 1, n), np.nan), np.full((n_seg + 1, n), np.nan)
        return out
    whole = bool(usable.all())
    ix = slice(None) if whole else np.flatnonzero(usable)
    sub = t_sq if whole else t_sq[:, ix]
    mix = c["motor_ix"][ix]
    starts, runs = _motor_runs(mix)
    first = np.arange(n)[ix][starts]
    net = [c[k][first] for k in THERMAL_NETWORK_FIELDS]
    if motor_maps is not None:      # built once for every motor of the catalogue
        maps = NetworkMaps(*(a[mix[starts]] if a.ndim > 1 else a for a in motor_maps))
    else:
        maps = network_capacity_maps(env.duration, *net, periodic=bool(env.repeat))
    n_cand = sub.shape[1]
    per_motor = (n_seg + 1) * n_seg * 8            # one response matrix [bytes]
    group = max(1, RESPONSE_BYTES // per_motor)     # motors (or rows) whose response matrices fit at once
    offsets = np.r_[0, np.cumsum(runs)]             # each motor's first candidate column in ``sub``
    regular = bool(np.all(runs == runs[0]))
    f_sub, at_w_sub = f[ix], at_w[ix]
    no_load = bool(np.any(f_sub > 0))
    ends = np.empty((n_seg + 1, n_cand)) if trajectory or not regular else None
    nl_up, nl_low, nl_at_peak = np.zeros(n_cand), np.zeros(n_cand), np.zeros(n_cand)
    peak, low, top = np.empty(n_cand), np.empty(n_cand), np.empty(n_cand, dtype=np.intp)
    response_nl = None
    if no_load:    # per motor of the chunk: from the catalogue's once, else built here
        response_nl = (_no_load_response(env, net, at_w_sub[starts]) if motor_no_load is None else
                       {k: v[..., mix[starts]] for k, v in motor_no_load.items()})
    # one pass over all the chunk's motors but for cycles of hundreds of segments, whose response
    # matrices are built a group of motors at a time
    for g0 in range(0, len(starts), group):
        g1 = min(len(starts), g0 + group)
        lo, hi, r = offsets[g0], offsets[g1], runs[g0:g1]
        owner = np.arange(g0, g1).repeat(r)
        if regular:       # a regular block (motor × ratios): one matrix product per motor
            response = network_response(NetworkMaps(*(a[g0:g1] if a.ndim > 1 else a for a in maps)))  # (m, S+1, S)
            block = np.matmul(response, np.moveaxis(sub[:, lo:hi].reshape(n_seg, g1 - g0, int(runs[0])), 0, 1))
            block_top = block.max(axis=1)                                           # (motors, ratios)
            peak[lo:hi], low[lo:hi] = block_top.reshape(-1), block.min(axis=1).reshape(-1)
            top[lo:hi] = _first_top(block, block_top, axis=1).reshape(-1)
            if trajectory:
                ends[:, lo:hi] = np.moveaxis(block, 1, 0).reshape(n_seg + 1, -1)
        else:             # each row swept through its own motor's network (O(S) per row)
            ends[:, lo:hi] = network_rise_path(sub[:, lo:hi], NetworkMaps(*(a[owner] if a.ndim > 1 else a
                                                                              for a in maps)))
            peak[lo:hi], low[lo:hi] = ends[:, lo:hi].max(axis=0), ends[:, lo:hi].min(axis=0)
            top[lo:hi] = _first_top(ends[:, lo:hi], peak[lo:hi], axis=0)
        if no_load:
            fg, own = f_sub[lo:hi], at_w_sub[lo:hi]
            nl_up[lo:hi] = fg * np.where(own, response_nl["up_w"][owner], response_nl["up_h"][owner])
            nl_low[lo:hi] = fg * np.where(own, response_nl["low_w"][owner], response_nl["low_h"][owner])
            at = top[lo:hi]                                              # the end where the copper peaks
            nl_at_peak[lo:hi] = fg * np.where(own, response_nl["ends_w"][at, owner], response_nl["ends_h"][at, owner])
    out["peak"][ix], out["low"][ix] = peak, low
    out["no_load_up"][ix], out["no_load_low"][ix], out["no_load_at_peak"][ix] = nl_up, nl_low, nl_at_peak
    motor_of = np.full(n, -1)
    motor_of[ix] = np.repeat(np.arange(len(starts)), runs)           # each candidate's motor in the chunk

    def no_load_path(rows):
        """The no-load loss's winding rise at the cycle start and every segment end of the candidates at
        ``rows`` (usable ones), (S + 1, len(rows))."""
        owner = motor_of[rows]
        if response_nl is None:
            return np.zeros((n_seg + 1, len(owner)))
        return f[rows] * np.where(at_w[rows], response_nl["ends_w"][:, owner], response_nl["ends_h"][:, owner])

    def paths(rows):
        """(copper per (N·m)², no-load) winding rises at the cycle start and every segment end of the
        candidates at ``rows`` (usable ones), (S + 1, len(rows)) each."""
        owner = motor_of[rows]
        copper = network_rise_path(t_sq[:, rows], NetworkMaps(*(a[owner] if a.ndim > 1 else a for a in maps)))
        return copper, no_load_path(rows)

    out["paths"] = paths
    if trajectory:
        out["path"], out["no_load_path"] = np.full((n_seg + 1, n), np.nan), np.full((n_seg + 1, n), np.nan)
        out["path"][:, ix] = ends
        out["no_load_path"][:, ix] = no_load_path(np.arange(n)[ix])
    return out


def _offset_rise(cold, offset, a, b):
    """Smallest y with y = s(y)·cold + offset, s(y) = (1 + a·y)/(1 + b·y)², inf where there is none [K].

    With y = offset + z: z = s(offset)·cold·(1 + a'·z)/(1 + b'·z)², a' = a/(1 + a·offset),
    b' = b/(1 + b·offset), the fixed point :func:`catalog.physics.hot_winding_rise` solves."""
    if not np.any(offset):
        return hot_winding_rise(cold, a, b)
    ka, kb = 1.0 + a * offset, 1.0 + b * offset
    with np.errstate(invalid="ignore", divide="ignore"):
        return offset + hot_winding_rise(cold * ka / (kb * kb), a / ka, b / kb)


def _argmax_rows(a, top):
    """Index of the first row of ``a`` (S, N) equal to ``top`` (its column maxima), per column."""
    idx = np.zeros(a.shape[1], dtype=np.intp)
    for k in range(a.shape[0] - 1, -1, -1):   # ascending order wins: the loop runs backwards
        idx[a[k] == top] = k
    return idx


def _quiet(func):
    """Run ``func`` with numpy's floating-point warnings off (in the thread that runs it: the
    setting is per thread).  Extreme datasheet values (1e300 N·m) overflow to inf and fail their
    checks; numpy's warnings about it would only reach the user's terminal as noise."""
    import functools

    @functools.wraps(func)
    def quiet(*args, **kwargs):
        with np.errstate(all="ignore"):
            return func(*args, **kwargs)

    return quiet


def _constants(env, c) -> dict:
    """Per candidate, what needs no segment: the coefficients ``coef`` (4, N) of the electromagnetic
    torque T_em = (J + Jg)·n·α + T_out/(n·η) (driving) or T_out·η/n (back-driven) + Tf·sign(ω)
    (``seg["basis"] @ coef``), R, Kt and Ke at ambient, a and b (the relative growth of R and Kt per
    kelvin), ``scale`` = R/Kt² at ambient (copper loss per (N·m)²) and which candidates have the
    thermal data (``missing``, ``usable``)."""
    n = len(c["terminal_resistance"])
    R, Kt, Ke = c["terminal_resistance"], c["torque_constant"], c["back_emf_constant"]
    t_ref, beta = c["resistance_reference_temperature"], c["magnet_coefficient"]
    ta = env.ambient_temperature
    ratio, eta = c["ratio"], c["efficiency"]
    back = eta if env.back_drive else 1.0 / eta
    coef = _buffer("coef", (4, n))
    np.multiply(c["rotor_inertia"] + c["gear_inertia"], ratio, out=coef[0])
    np.divide(1.0, ratio * eta, out=coef[1])
    np.divide(back, ratio, out=coef[2])
    coef[3] = c["friction_torque"]
    r_amb = resistance_at_temperature(R, ta, t_ref)
    kt_amb = torque_constant_at_temperature(Kt, ta, beta, t_ref)
    ke_amb = torque_constant_at_temperature(Ke, ta, beta, t_ref)
    fields = THERMAL_FIELDS + (CYCLE_THERMAL_FIELDS if env.mode == "cycle" else ())
    missing = np.zeros(n, bool)
    for name in fields:
        missing |= np.isnan(c[name])
    usable = ~missing & (r_amb > 0) & (kt_amb > 0)
    a = (resistance_at_temperature(R, ta + 1.0, t_ref) - r_amb) / r_amb
    b = (torque_constant_at_temperature(Kt, ta + 1.0, beta, t_ref) - kt_amb) / kt_amb
    return {"n": n, "coef": coef, "r_amb": r_amb, "kt_amb": kt_amb, "ke_amb": ke_amb, "a": a, "b": b,
            "scale": r_amb / (kt_amb * kt_amb), "missing": missing, "usable": usable}


def _winding_limit(c) -> np.ndarray:
    """The winding's temperature limit of each candidate [K]: the datasheet's, else
    :data:`FALLBACK_TEMPERATURE`."""
    return np.where(np.isnan(c["max_winding_temperature"]), FALLBACK_TEMPERATURE, c["max_winding_temperature"])


def _hot_constants(env, c, usable, rise, kt_only: bool = False) -> tuple:
    """(winding temperature of the hot corner [K], R, Kt, Ke there) at the peak rise ``rise`` [K]: the
    winding at its peak, but never above its limit (hotter, the candidate fails the temperature check,
    and every other check is judged at the hottest the winding may be); at the limit (or the fallback
    temperature) where the rise is unknown or runaway.  ``kt_only``: R and Ke are None (not needed)."""
    ta = env.ambient_temperature
    fallback = _winding_limit(c)
    tw_eval = np.where(usable & ~np.isinf(rise), np.fmin(ta + rise, fallback), fallback)
    t_ref, beta = c["resistance_reference_temperature"], c["magnet_coefficient"]
    kt = torque_constant_at_temperature(c["torque_constant"], tw_eval, beta, t_ref)
    if kt_only:
        return tw_eval, None, kt, None
    return (tw_eval, resistance_at_temperature(c["terminal_resistance"], tw_eval, t_ref), kt,
            torque_constant_at_temperature(c["back_emf_constant"], tw_eval, beta, t_ref))


def _motor_tables(env, c, seg):
    """The per-motor tables of the compiled pass: (the 8 network maps (M, S), each candidate's row
    in them (N,), the no-load loss's exact response (:func:`_no_load_response`)): the catalogue's,
    built once (``seg``), else those of the chunk's motors."""
    n_seg = len(env.duration)
    if seg.get("motor_maps") is not None:
        maps, owner, nl = seg["motor_maps"], np.asarray(c["motor_ix"], dtype=np.intp), seg["motor_no_load"]
    else:
        starts, runs = _motor_runs(c["motor_ix"])
        net = [c[k][starts] for k in THERMAL_NETWORK_FIELDS]
        maps = network_capacity_maps(env.duration, *net, periodic=bool(env.repeat))
        owner = np.repeat(np.arange(len(starts)), runs)
        nl = _no_load_response(env, net, np.asarray(c["no_load_at_winding"], dtype=bool)[starts])
    n_motors = int(owner.max()) + 1 if seg.get("motor_maps") is None else np.shape(maps.e11)[0]
    # C-contiguous, writeable float64 (M, S) each: the one signature the kernel is compiled for
    tables = [getattr(maps, k) for k in ("e11", "e12", "e21", "e22", "hw", "hh", "qw", "qh")]
    tables = [np.require(x if np.shape(x) == (n_motors, n_seg) else np.broadcast_to(x, (n_motors, n_seg)), float,
                         ["C", "W"]) for x in tables]
    return tables, owner, nl


def _kernel_loads(env, c, seg) -> dict:
    """:func:`_loads` for the verdict pass, compiled (:func:`catalog.select.kernel.verdict_pass`): per
    candidate only (N,) arrays — the brackets ``upper`` and ``lower`` of the peak rise (the lower one
    for every candidate) and the needed voltage with the winding at ambient (``need_cold``), at the
    upper bracket (``need_upper``) and at the lower one (``need_lower``)."""
    from . import kernel

    base = _constants(env, c)
    n = base["n"]
    tables, owner, nl = _motor_tables(env, c, seg)
    ratio = c["ratio"]
    limit = _winding_limit(c) - env.ambient_temperature
    keys = ("sq_top", "sq_rms", "upper", "lower", "need_cold", "need_upper", "need_lower")
    out = {k: np.empty(n) for k in keys}
    kernel.verdict_pass(owner, base["coef"], seg["basis"], seg["w_mid"], seg["half_span"], env.duration,
                        float(env.period), base["r_amb"] / base["kt_amb"], base["ke_amb"] * ratio,
                        np.ascontiguousarray(c["brush_voltage_drop"], dtype=float), base["scale"], base["a"],
                        base["b"], base["usable"], limit, *tables,
                        np.ascontiguousarray(c["friction_torque"] * ratio),   # no-load loss per rad/s of load speed
                        np.ascontiguousarray(np.asarray(c["no_load_at_winding"], dtype=bool)),
                        nl["ends_w"], nl["ends_h"], nl["up_w"], nl["up_h"], nl["low_w"], nl["low_h"],
                        bool(env.repeat), *(out[k] for k in keys))
    base.update(out, brush_sign=None)
    return base


def _loads(env, c, seg, trajectory=False) -> dict:
    """What does not depend on the winding temperature: torques, cold constants, the cold corner's
    needed voltage, the cold network's extremes and the temperature brackets."""
    base = _constants(env, c)
    n, coef, r_amb, kt_amb, ke_amb = (base[k] for k in ("n", "coef", "r_amb", "kt_amb", "ke_amb"))
    a, b, scale, missing, usable = (base[k] for k in ("a", "b", "scale", "missing", "usable"))
    ratio = c["ratio"]
    n_seg = len(seg["w0"])
    t_em = np.matmul(seg["basis"], coef, out=_buffer("t_em", (n_seg, n)))   # (S, N)
    t_sq = np.multiply(t_em, t_em, out=_buffer("t_sq", (n_seg, n)))
    net = _cold_range(env, c, t_sq, usable, seg.get("motor_maps"), trajectory=trajectory,
                      motor_no_load=seg.get("motor_no_load"))
    # the upper bracket of the peak rise: every copper loss held at the s(θ) = (1 + a·θ)/(1 + b·θ)² of the
    # peak (s grows with θ), the no-load loss at its bound from above; the lower one (:func:`_lower`) where
    # it is needed.  Operating points: the exact steady state of the hottest continuous point.
    if env.mode == "points":
        upper = np.zeros(n)
        for cu, nl in zip(net.get("points", ()), net.get("no_load_points", ())):
            upper = np.fmax(upper, _offset_rise(cu * scale, nl, a, b))
        upper = np.where(usable, upper, np.nan)
    else:
        upper = _offset_rise(net["peak"] * scale, net["no_load_up"], a, b)
    # the cold corner (winding and magnet at ambient): |R/Kt·T_em + V_brush·sign(I) + Ke·n·ω| at the
    # segment ends
    emf = ke_amb * ratio
    terms = _buffer("terms", (5, n))
    np.multiply(coef, r_amb / kt_amb, out=terms[:4])
    terms[4] = emf
    cold = np.matmul(seg["voltage_basis"], terms, out=_buffer("cold", (n_seg, n)))   # at mid speed
    brush = c["brush_voltage_drop"]
    brush_sign = None
    if np.any(brush > 0):            # the brushes drop their voltage in the direction of the current
        brush_sign = np.sign(t_em) * brush
        cold += brush_sign
    np.abs(cold, out=cold)
    cold += np.multiply.outer(seg["half_span"], emf, out=_buffer("spread", (n_seg, n)))
    if env.mode == "cycle":
        sq_rms = (env.duration @ t_sq) / env.period       # mean of T_em² over the cycle
    else:
        cont = env.continuous
        sq_rms = np.max(t_sq[cont], axis=0) if cont.any() else np.zeros(n)
    return {"n": n, "coef": coef, "t_em": t_em, "t_sq": t_sq, "r_amb": r_amb, "kt_amb": kt_amb,
            "sq_top": np.maximum.reduce(t_sq, axis=0), "sq_rms": sq_rms,
            "ke_amb": ke_amb, "a": a, "b": b, "scale": scale, "missing": missing, "usable": usable,
            "upper": upper, "cold": cold, "brush_sign": brush_sign, "peak": net["peak"], "low": net["low"],
            "no_load_low": net["no_load_low"], "no_load_at_peak": net.get("no_load_at_peak"), "path": net.get("path"),
            "paths": net.get("paths"),
            "no_load_path": net.get("no_load_path")}


def _lower(env, base, rows) -> np.ndarray:
    """The lower bracket of the peak rise of the candidates at ``rows`` [K] (inf: runaway for sure).

    Every copper loss held at the s of the cycle's coolest winding temperature m: a repeated cycle's m
    is at least the smallest root of m = s(m)·(coolest cold copper rise) + (the no-load loss's lowest
    rise) (none: no periodic state at all); one pass from ambient starts cold (s ≥ 1).  At every
    segment end the rise is then at least s(m)·(cold copper rise there) plus the no-load loss's rise
    there (exact: it does not depend on the winding temperature), and the peak at least the highest
    of these.
    Operating points: the exact steady state (the upper bracket).
    """
    if env.mode == "points":
        return base["upper"][rows]
    copper, no_load = base["paths"](rows)                          # (S + 1, rows) each
    copper = copper * base["scale"][rows]
    if not env.repeat:
        return np.max(copper + no_load, axis=0)
    a, b = base["a"][rows], base["b"][rows]
    floor = _offset_rise(base["low"][rows] * base["scale"][rows], base["no_load_low"][rows], a, b)
    with np.errstate(invalid="ignore"):
        grown = (1 + a * floor) / (1 + b * floor) ** 2
        return np.where(np.isfinite(floor), np.max(copper * grown + no_load, axis=0), np.inf)


def _quick_lower(env, base, rows) -> np.ndarray:
    """A closed-form bound below :func:`_lower` [K]: with s(θ) ≥ 1 + k·θ (k = a − 2b, the tangent at 0
    of the convex s) the coolest rise m ≥ Q/(1 − k·Q) (none where k·Q ≥ 1), so the peak ≥ P/(1 − k·Q),
    Q and P the coolest and the peak cold rise."""
    peak = base["peak"][rows] * base["scale"][rows]
    if env.mode == "points" or not env.repeat:
        return _lower(env, base, rows)
    q = base["low"][rows] * base["scale"][rows]
    kq = (base["a"][rows] - 2.0 * base["b"][rows]) * q
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(kq < 1.0, peak / (1.0 - kq) + base["no_load_at_peak"][rows], np.inf)


def _subset(base: dict, c: dict, rows):
    """``base`` and ``c`` at the candidate positions ``rows`` (copies)."""
    n = base["n"]
    cut = (lambda v: v[..., rows] if isinstance(v, np.ndarray) and v.shape[-1:] == (n,) else v)
    sub = {k: cut(v) for k, v in base.items()}
    sub["n"], sub["paths"] = len(rows), None          # the paths are indexed by the whole chunk's rows
    return sub, {k: (v[rows] if isinstance(v, np.ndarray) and v.shape[:1] == (n,) else v) for k, v in c.items()}


def _exact_rise(env, c, base, rows, start):
    """The exact peak rise and per-segment mean rises (S, len(rows)) of the candidates at ``rows``:
    :func:`catalog.physics.hot_network_rise` with R and Kt following the winding."""
    f = (c["friction_torque"] * c["ratio"])[rows]          # the no-load loss T_f·n·|ω|, ramping with the speed
    sol = hot_network_rise(env.duration, base["t_sq"][:, rows] * base["scale"][rows], base["a"][rows],
                           base["b"][rows], c["thermal_resistance_winding_housing"][rows],
                           c["thermal_resistance_housing_ambient"][rows], c["winding_heat_capacity"][rows],
                           c["housing_heat_capacity"][rows], periodic=bool(env.repeat),
                           no_load_loss_start=np.multiply.outer(np.abs(env.speed_start), f),
                           no_load_loss_end=np.multiply.outer(np.abs(env.speed_end), f),
                           no_load_at_winding=np.asarray(c["no_load_at_winding"], dtype=bool)[rows],
                           start_rise=start)
    return sol.peak, sol.segment_mean


def _needed_voltage(seg, base, ratio, r_hot, kt_hot, ke_hot, cold_only, detail):
    """(needed voltage (N,), per segment (S, N), where the hot corner is the worse (S, N) with
    ``detail``) of the cold corner ``base["cold"]`` and the hot one (R, Kt and Ke at the peak):
    |R/Kt·T_em + V_brush·sign(I) + Ke·n·ω| at the mid speed + Ke·n·|Δω|/2 gives the worse segment
    end."""
    n, n_seg = base["n"], len(seg["w0"])
    cold = base["cold"]
    if cold_only:                        # the winding at ambient: the hot corner is the cold one
        worse, need = np.zeros(cold.shape, bool), cold
    else:
        emf = ke_hot * ratio
        terms = _buffer("terms", (5, n))
        np.multiply(base["coef"], r_hot / kt_hot, out=terms[:4])
        terms[4] = emf
        v = np.matmul(seg["voltage_basis"], terms, out=_buffer("v", (n_seg, n)))
        if base["brush_sign"] is not None:
            v += base["brush_sign"]
        np.abs(v, out=v)
        v += np.multiply.outer(seg["half_span"], emf, out=_buffer("spread", (n_seg, n)))
        worse = v >= cold if detail else None
        need = np.fmax(cold, v, out=_buffer("need", (n_seg, n)))
    return np.fmax.reduce(need, axis=0), need, worse                 # NaN (no constants) never wins


def _at_temperature(env, c, seg, base, rise, seg_rise=None, detail=False, energy=False, where=False,
                    cold_only=False, need=None):
    """Everything that follows from the peak winding rise ``rise`` (N,) [K] (inf: runaway): the hot
    corner's voltage, the currents at the hot torque constant, the energy per cycle (R and Kt at each
    segment's mean rise ``seg_rise`` (S, N) where known, else at the peak).  ``cold_only``: ``rise`` is
    zero for every usable candidate (the verdicts with the winding at ambient).  ``need`` (N,): the
    needed voltage at ``rise``, already known (the compiled pass, :func:`_kernel_loads`: then
    nothing per segment is computed here)."""
    n, n_seg = base["n"], len(seg["w0"])
    R, Kt, Ke = c["terminal_resistance"], c["torque_constant"], c["back_emf_constant"]
    t_ref, beta = c["resistance_reference_temperature"], c["magnet_coefficient"]
    ta = env.ambient_temperature
    ratio, missing, usable = c["ratio"], base["missing"], base["usable"]
    runaway = usable & np.isinf(rise)
    tw_eval, r_hot, kt_hot, ke_hot = _hot_constants(env, c, usable, rise, kt_only=need is not None)
    reported = np.where(missing, np.nan, np.where(runaway, np.inf, ta + rise))
    if need is not None:
        if detail or energy or where:
            raise ValueError("a known needed voltage has no per-segment detail")
        need_w = need
    else:
        need_w, need, worse = _needed_voltage(seg, base, ratio, r_hot, kt_hot, ke_hot, cold_only, detail)
    coef, t_em, t_sq = base["coef"], base.get("t_em"), base.get("t_sq")
    avail = env.available_voltage
    sq_top = base["sq_top"]
    peak_current = np.sqrt(sq_top) / kt_hot
    i_rms = np.sqrt(base["sq_rms"]) / kt_hot
    out = {
        "winding_temperature": reported, "runaway": runaway, "thermal_missing": missing, "voltage_temperature": tw_eval,
        "rms_current": i_rms, "peak_current": peak_current,
        "voltage_margin": (avail - need_w) / avail, "voltage_need": need_w,
        "motor_speed": ratio * seg["w_abs_max"],
        "gear_out_peak": np.full(n, seg["t_out_abs"][seg["gear_out_seg"]]),
        "gear_out_rms": np.full(n, seg["out_rms"]),
    }
    if where:
        rows = np.arange(n)
        v_seg = _argmax_rows(need, need_w)
        t_w = t_em[v_seg, rows]
        brush_w = 0.0 if base["brush_sign"] is None else base["brush_sign"][v_seg, rows]
        corners = [(r / kt * t_w + brush_w, ke * ratio)
                   for r, kt, ke in ((base["r_amb"], base["kt_amb"], base["ke_amb"]), (r_hot, kt_hot, ke_hot))]
        w0, w1 = seg["w0"][v_seg], seg["w1"][v_seg]
        ends = [[np.abs(drop + e * w) for w in (w0, w1)] for drop, e in corners]
        out.update({"voltage_seg": v_seg, "voltage_hot": np.fmax(*ends[1]) >= np.fmax(*ends[0]),
                    "voltage_speed": ratio * np.where(np.fmax(ends[0][0], ends[1][0]) >= np.fmax(ends[0][1], ends[1][1]),
                                                      np.abs(w0), np.abs(w1)),
                    "peak_current_seg": _argmax_rows(t_sq, sq_top), "speed_seg": np.full(n, seg["speed_seg"]),
                    "gear_out_seg": np.full(n, seg["gear_out_seg"])})
    e = np.full(n, np.nan)
    if energy and env.mode == "cycle":
        # R, Kt and Ke at each segment's mean winding temperature (the peak where that is not known)
        seg_t = (tw_eval[:, None] if seg_rise is None else
                 np.where(np.isfinite(seg_rise.T), ta + seg_rise.T, tw_eval[:, None]))          # (N, S)
        r_s = resistance_at_temperature(R[:, None], seg_t, t_ref[:, None])
        kt_s = torque_constant_at_temperature(Kt[:, None], seg_t, beta[:, None], t_ref[:, None])
        ke_s = torque_constant_at_temperature(Ke[:, None], seg_t, beta[:, None], t_ref[:, None])
        i_seg = t_em.T / kt_s
        i_abs = np.abs(i_seg)
        drop = i_seg * r_s
        emf_s = ke_s * ratio[:, None]
        vh0, vh1 = drop + emf_s * seg["w0"], drop + emf_s * seg["w1"]
        drops = env.drive_voltage_drop + c["brush_voltage_drop"][:, None]     # drive and brushes
        e = energy_per_cycle(vh0 * i_seg + drops * i_abs, env.duration,
                             vh1 * i_seg + drops * i_abs, regenerative=env.regenerative)
    out["energy_per_cycle"] = e
    if detail:   # copies: the scratch arrays are used again by the next chunk
        t_m = t_em - np.multiply.outer(seg["friction_sign"], c["friction_torque"])
        out.update(seg_motor_torque=t_m.T.copy(), seg_em_torque=t_em.T.copy(), seg_current=(t_em / kt_hot).T,
                   seg_voltage=need.T.copy(), seg_speed_start=np.multiply.outer(ratio, seg["w0"]),
                   seg_speed_end=np.multiply.outer(ratio, seg["w1"]),
                   seg_gear_torque=np.broadcast_to(seg["t_out_abs"], (n, len(seg["w0"]))),
                   seg_hot_worse=worse.T.copy())
    return out


def _verdicts(env, c, r, n) -> np.ndarray:
    """(checks, N) failures of the checks that read the motor constants (their verdicts move with the
    winding temperature)."""
    from .registry import REGISTRY, CheckInputs, below_required

    x = CheckInputs(env, c, r, n)
    out = []
    for check in REGISTRY:
        if not check.corners or not check.applies(env):
            continue
        x.check = check
        m = np.asarray(check.compute(x), dtype=float) if check.compute is not None else None
        out.append(np.broadcast_to(np.asarray((check.fails or below_required)(x, m), dtype=bool), (n,)))
    return np.array(out).reshape(len(out), n)


@_quiet
def evaluate(env, c: dict, detail: bool = False, energy: bool = True, seg: dict | None = None,
             where: bool = True, exact: str = "all", compiled: bool = False) -> dict:
    """Evaluate one chunk of candidates.

    Parameters
    ----------
    env : Envelope
        The load envelope (SI).
    c : dict
        Candidate arrays of one chunk (keys :data:`EVAL_KEYS`, see
        :class:`~catalog.select.candidates.Candidates`).
    detail : bool
        Also return the (N, S) segment arrays (for explanations).
    energy : bool
        Also compute the energy per cycle (else NaN; a selection computes it
        for the rows it shows).
    seg : dict, optional
        The shared segment arrays of ``env`` (computed when not given).
    where : bool
        Also say where the worst values occur (``*_seg``, ``voltage_speed``,
        ``voltage_hot``: only the texts need them; without, they are absent).
    exact : str
        How the peak winding temperature of a repeated or single cycle is
        found: ``"all"`` exactly for every candidate (the numbers shown);
        ``"band"`` from its brackets, with ``open`` [-] marking the
        candidates where a verdict depends on where in between it lies (the
        verdict pass solves those exactly afterwards, all at once);
        ``"passing"`` as ``"band"``, and ``open`` also where every check of
        the motor constants passes (a ranking by a number that moves with
        the temperature); ``"screen"`` the upper bracket (every loss at the
        peak temperature).
    compiled : bool
        Take the brackets and needed voltages of ``"band"`` and
        ``"passing"`` on a cycle from the compiled pass
        (:func:`catalog.select.kernel.verdict_pass`, needs numba): the same
        numbers to rounding, without (S, N) arrays; ignored elsewhere and
        with ``detail``, ``energy`` or ``where``.

    Returns
    -------
    dict
        Per candidate: ``winding_temperature`` [K] (NaN without thermal data,
        inf at runaway), ``runaway`` [-], ``thermal_missing`` [-],
        ``rms_current``/``peak_current`` [A], ``voltage_need``/``voltage_speed``
        (worst segment's needed voltage [V] and motor speed there [rad/s]),
        ``voltage_temperature`` (the hot corner's winding temperature) [K],
        ``motor_speed`` [rad/s], ``gear_out_peak``/``gear_out_rms`` [N·m],
        ``energy_per_cycle`` [J], segment indices ``*_seg`` and, with
        ``detail``, arrays ``seg_*`` of shape (N, S).

    Notes
    -----
    Arrays are laid out segments first, (S, N), so that every per-segment
    step works on contiguous rows; the torque and voltage of every segment
    are one small matrix product each, since both are linear in a handful of
    per-candidate coefficients.  The verdicts move monotonically with the
    peak winding temperature (the needed voltage is the larger of a cold and
    a hot corner, |R(θ)/Kt(θ)·T + Ke(θ)·ω| being convex in θ; the currents
    grow as Kt falls), so a candidate whose every verdict agrees at both
    brackets is decided without the exact solution.
    """
    seg = _segments(env) if seg is None else seg
    compiled = compiled and env.mode == "cycle" and exact in ("band", "passing") and not (detail or energy or where)
    base = _kernel_loads(env, c, seg) if compiled else _loads(env, c, seg, trajectory=exact == "all")
    upper = base["upper"]
    n = base["n"]
    full = dict(detail=detail, energy=energy, where=where)
    if env.mode != "cycle" or exact == "screen":
        return _at_temperature(env, c, seg, base, upper, **full)
    usable = base["usable"]
    if exact != "all":
        out = _at_temperature(env, c, seg, base, upper, need=base.get("need_upper"), **full)
        fails_hi = _verdicts(env, c, out, n)
        open_ = usable & ~np.any(fails_hi, axis=0) if exact == "passing" else np.zeros(n, bool)
        if compiled:
            # every verdict is monotone in the peak rise θ on [0, upper]: equal at the lower bracket (known
            # for every candidate here) and at the upper one, it is decided (at or beyond the winding's
            # limit both are judged at the limit, where the temperature check fails at both)
            lo = _at_temperature(env, c, seg, base, base["lower"], need=base["need_lower"])
            open_ |= usable & np.any(_verdicts(env, c, lo, n) != fails_hi, axis=0)
            out["open"] = open_
            return out
        # the same on the numpy path, where the lower bracket costs a sweep of the network per candidate:
        # equal at θ = 0 and at the upper bracket, a verdict is decided; else the lower bracket may still
        # decide it
        cold = _at_temperature(env, c, seg, base, np.zeros(n), cold_only=True)
        rows = np.flatnonzero(usable & np.any(fails_hi != _verdicts(env, c, cold, n), axis=0))
        if rows.size:
            # at or beyond the winding's limit every other check is judged at the limit (capped) and the
            # temperature check fails at both brackets: decided.  A closed-form lower bound first (the
            # tangent 1 + (a − 2b)·θ of s at 0 lies below s), the lower bracket where that is not enough
            limit = _winding_limit(c) - env.ambient_temperature
            rows = rows[_quick_lower(env, base, rows) < limit[rows]]
            lower = _lower(env, base, rows)
            rows, lower = rows[lower < limit[rows]], lower[lower < limit[rows]]
        if rows.size:
            sub_base, sub_c = _subset(base, c, rows)
            lo = _at_temperature(env, sub_c, seg, sub_base, lower)
            open_[rows] |= np.any(_verdicts(env, sub_c, lo, len(rows)) != fails_hi[:, rows], axis=0)
        out["open"] = open_
        return out
    rise, seg_rise = upper.copy(), None
    rows = np.flatnonzero(usable)
    if rows.size:
        lower = _lower(env, base, rows)
        # the first guess: the cold trajectory with every loss at the s of the middle of the brackets
        a, b = base["a"][rows], base["b"][rows]
        mid = np.where(np.isfinite(upper[rows]), 0.5 * (lower + upper[rows]), lower)
        mid = np.where(np.isfinite(mid), mid, 0.0)
        start = (base["path"][:, rows] * base["scale"][rows] * ((1 + a * mid) / (1 + b * mid) ** 2)
                 + base["no_load_path"][:, rows])
        peak, mean = _exact_rise(env, c, base, rows, start)
        # the exact value lies between the brackets (a rounding outside them would break the verdicts
        # decided by the brackets)
        rise[rows] = np.where(np.isinf(peak), np.inf, np.clip(peak, lower, upper[rows]))
        seg_rise = np.full((len(env.duration), n), np.nan)
        seg_rise[:, rows] = mean
    return _at_temperature(env, c, seg, base, rise, seg_rise, **full)

@_quiet
def rise_brackets(env, c: dict, compiled: bool = False) -> tuple:
    """(lower, upper) brackets of the peak winding rise [K] of candidate rows ``c`` (NaN where thermal
    data is missing, inf: runaway), as the verdict pass uses them: the exact rise lies between.
    ``compiled``: from the compiled pass (:mod:`catalog.select.kernel`; a cycle only)."""
    seg = _segments(env)
    if compiled:
        base = _kernel_loads(env, c, seg)
        return np.where(base["usable"], base["lower"], np.nan), base["upper"]
    base = _loads(env, c, seg)
    lower = np.full(base["n"], np.nan)
    rows = np.flatnonzero(base["usable"])
    if rows.size:
        lower[rows] = _lower(env, base, rows)
    return lower, base["upper"]


#: Keep freed memory for reuse once a large selection runs (:func:`_keep_freed_memory`) [-]
KEEP_FREED_MEMORY = True
_ALLOCATOR_SET = []


def _keep_freed_memory() -> None:
    """Once per process, on the first large selection (glibc only, else nothing): the C allocator keeps
    freed blocks of up to 64 MiB in its heap for reuse (``mallopt``: mmap threshold 64 MiB, trim
    threshold 1 GiB) instead of handing each megabyte-sized temporary of a chunk back to the operating
    system and faulting its pages in afresh for the next one.  Measured on the 2M-candidate benchmark
    (2-core VM): 60k–300k minor page faults per selection, 0.2–0.8 s of system time, down to about 1k
    from the third selection on.  The cost: the process keeps up to the selection's peak memory after
    it (a command ends anyway; a server reuses it for the next selection)."""
    if _ALLOCATOR_SET or not KEEP_FREED_MEMORY:
        return
    _ALLOCATOR_SET.append(True)
    import ctypes
    import platform

    if platform.system() != "Linux" or platform.libc_ver()[0] != "glibc":
        return
    mallopt = getattr(ctypes.CDLL(None), "mallopt", None)
    if mallopt is not None:
        mallopt(-3, 64 * 2**20)      # M_MMAP_THRESHOLD [bytes]
        mallopt(-1, 2**30)           # M_TRIM_THRESHOLD [bytes]


def _kernel_available() -> bool:
    """Whether the compiled verdict pass can run (numba imports)."""
    try:
        from . import kernel  # noqa: F401
    except ImportError:
        return False
    return True


def _chunk_starts(motor_ix, total: int, size: int = CHUNK) -> list:
    """Chunk boundaries: whole runs of one motor packed greedily up to ``size`` rows (so a regular
    block of motor × ratios stays whole and its thermal maps broadcast); a motor with more than
    ``size`` candidates is split, so no chunk holds more than ``size``."""
    if total <= size:
        return [0]
    run_starts = np.flatnonzero(np.r_[True, motor_ix[1:] != motor_ix[:-1]])
    bounds = np.r_[run_starts, total]
    starts, at = [], 0
    while at < total:
        starts.append(at)
        # the last run start that keeps this chunk within ``size`` rows (at least one run)
        k = int(np.searchsorted(bounds, at + size, side="right")) - 1
        nxt = int(bounds[k]) if k >= 0 else total
        at = nxt if nxt > at else min(total, at + size)     # one run longer than ``size``: split it
    return starts


def checked_in_chunks(env, c: dict, **kw) -> dict:
    """:func:`checked` of candidate rows ``c`` (a dict of arrays), chunk by chunk (bounded
    memory whatever their number and the envelope's segments), concatenated."""
    n = len(c["terminal_resistance"])
    size = chunk_rows(len(env.duration))   # the evaluated segments (split at zero crossings)
    if n <= size:
        return checked(env, c, **kw)
    seg = kw.pop("seg", None) or _segments(env)
    parts = [checked(env, {k: v[lo:lo + size] for k, v in c.items()}, seg=seg, **kw) for lo in range(0, n, size)]
    return {k: (np.concatenate([p[k] for p in parts]) if np.ndim(parts[0][k]) else parts[0][k]) for k in parts[0]}


def _at_corner(c: dict, scales: tuple) -> dict:
    """The candidate columns with Kt and Ke × ``scales[0]`` and R × ``scales[1]``."""
    k, r = scales
    if k == 1.0 and r == 1.0:
        return c
    out = dict(c)
    out["torque_constant"] = c["torque_constant"] * k
    out["back_emf_constant"] = c["back_emf_constant"] * k
    out["terminal_resistance"] = c["terminal_resistance"] * r
    return out


def at_corners(env, c: dict, **kw) -> dict:
    """:func:`evaluate` at every tolerance corner the checks declare, merged into one result.

    The result is that of :data:`~catalog.select.registry.METRIC_CORNER`; a
    check judged at other corners contributes the keys it ``owns`` from the
    corner that gives it the smallest margin, per candidate, and
    ``corner_<check>`` (its index into the check's corners).  Without a
    tolerance band every corner is the same and :func:`evaluate` runs once.
    """
    from .registry import REGISTRY, CheckInputs, corner_scales, corners_in_use

    scales = corners_in_use(env)
    results = {sc: evaluate(env, _at_corner(c, sc), **kw) for sc in scales}
    r = dict(results[scales[0]])
    if "open" in r:      # a verdict left open at any corner: the candidate is solved exactly
        r["open"] = np.logical_or.reduce([results[sc]["open"] for sc in scales])
    n = len(c["ratio"])
    for check in REGISTRY:
        if not check.corners or not check.applies(env):
            continue
        own = [corner_scales(env, k) for k in check.corners]
        if len(set(own)) == 1:
            pick = np.zeros(n, dtype=np.intp)
        else:
            margins = []
            for sc in own:
                x = CheckInputs(env, c, results[sc], n)
                x.check = check
                margins.append(np.nan_to_num(np.asarray(check.compute(x), dtype=float), nan=np.inf))
            pick = np.argmin(np.stack(margins), axis=0)       # first corner wins ties
        for key in check.owns:
            if key not in results[own[0]]:
                continue
            value = results[own[0]][key]
            for i, sc in enumerate(own[1:], start=1):
                chosen = pick == i
                if chosen.any():
                    other = results[sc][key]
                    mask = chosen.reshape((-1,) + (1,) * (np.ndim(value) - 1))
                    value = np.where(mask, other, value)
            r[key] = value
        r["corner_" + check.key] = pick
    return r


@_quiet
def checked(env, c: dict, energy: bool = True, seg: dict | None = None, detail: bool = False,
            where: bool = True, exact: str = "all", compiled: bool = False) -> dict:
    """:func:`at_corners` plus the checks (no texts) of candidate rows ``c``.

    Adds every margin, ``fails_<check>`` per check, ``passed`` and, with
    ``where``, ``worst_seg`` (the segment of the smallest of the voltage,
    peak-current and speed margins) to the evaluation.
    """
    from .checks import CHECKS, run_checks

    r = at_corners(env, c, detail=detail, energy=energy, seg=seg, where=where, exact=exact, compiled=compiled)
    margins, failed, _, _ = run_checks(env, c, r, with_texts=False)
    r.update(margins)
    r.update({"fails_" + k: failed[k] for k in CHECKS})
    r["passed"] = ~np.logical_or.reduce([failed[k] for k in CHECKS])
    if not where:
        return r
    worst = r["voltage_seg"].copy()
    low = np.nan_to_num(r["voltage_margin"], nan=np.inf)
    for margin, at in (("peak_current_margin", "peak_current_seg"), ("motor_speed_margin", "speed_seg")):
        m = np.nan_to_num(r[margin], nan=np.inf)
        better = m < low
        worst[better], low = r[at][better], np.where(better, m, low)
    r["worst_seg"] = worst
    return r


#: ranking keys whose values move with the winding temperature (a ranking by them needs the exact
#: temperature of every candidate that can pass)
TEMPERATURE_KEYS = ("winding_temperature", "rms_current", "peak_current", "energy_per_cycle", "smallest_margin")


def evaluate_all(env, cand, energy: bool = True, keep=None) -> dict:
    """The verdicts of every candidate: :func:`checked` chunk by chunk.

    Returns ``passed`` and ``fails_<check>`` for every candidate and, for
    the names in ``keep`` (default: everything :func:`checked` returns),
    their arrays.  Everything else of a candidate is computed again, exactly
    the same way, for the rows somebody reads (:func:`checked` on those rows):
    a selection over millions of candidates so writes little more than its
    verdicts, and first touching memory is not free.  Chunks run side by side
    on :data:`WORKERS` threads and write into arrays allocated once.
    """
    from threadpoolctl import threadpool_limits

    from .checks import CHECKS, check_keys

    is_set = hasattr(cand, "take")
    total = cand.size if is_set else len(cand["ratio"])
    if not total:
        return {}
    seg = _segments(env)
    n_seg = len(env.duration)
    if is_set and env.mode == "cycle" and 9 * 8 * n_seg * len(cand.motors["id"]) <= MAPS_BYTES:
        mt = cand.motors   # the network maps of every motor, once (motor_ix indexes them)
        with np.errstate(all="ignore"), threadpool_limits(1, user_api="blas"):
            seg["motor_maps"] = network_capacity_maps(env.duration, *(mt[k] for k in THERMAL_NETWORK_FIELDS),
                                                      periodic=bool(env.repeat))
            seg["motor_no_load"] = _no_load_response(env, [mt[k] for k in THERMAL_NETWORK_FIELDS],
                                                     mt["no_load_at_winding"], workers=WORKERS)
    # a large selection's verdict pass runs compiled (numba: its import and cached code cost about
    # half a second, which only a large selection wins back)
    compiled = env.mode == "cycle" and total >= KERNEL_MIN and _kernel_available()
    if total >= KERNEL_MIN:
        _keep_freed_memory()
    size = KERNEL_CHUNK if compiled else chunk_rows(n_seg)
    starts = _chunk_starts(np.asarray(cand.motor_ix if is_set else cand["motor_ix"]), total, size)
    bounds = list(zip(starts, starts[1:] + [total]))
    keys = tuple(dict.fromkeys(EVAL_KEYS + check_keys(env)))
    wanted = None if keep is None else {"passed", *("fails_" + k for k in CHECKS), *keep}
    # the verdicts need the exact winding temperature only where a bracket leaves one open; numbers kept
    # for a ranking need it wherever a candidate can pass
    exact = "passing" if keep is None or any(k in TEMPERATURE_KEYS for k in keep) else "band"
    out: dict = {}

    def take(rows):
        if is_set:
            return cand.take(rows, keys)
        return {k: v[rows] for k, v in cand.items() if k in keys}

    def run(b):
        r = checked(env, take(slice(*b)), energy=energy, seg=seg, where=wanted is None, exact=exact,
                    compiled=compiled)
        return b, (r if wanted is None else {k: v for k, v in r.items() if k in wanted or k == "open"})

    def run_exact(rows):
        r = checked(env, take(rows), energy=energy, seg=seg, where=wanted is None, exact="all")
        return rows, (r if wanted is None else {k: v for k, v in r.items() if k in wanted})

    def store(b, r):
        if not out:
            for k, v in r.items():
                out[k] = np.empty(total, dtype=np.asarray(v).dtype)
        at = slice(*b) if isinstance(b, tuple) else b
        for k, v in r.items():
            if k in out:
                out[k][at] = v

    def sweep(fn, parts):
        """``fn`` over ``parts``, side by side on the worker threads, each result stored."""
        workers = min(len(parts), WORKERS)
        if not parts:
            return
        store(*fn(parts[0]))
        if workers > 1:   # numpy releases the GIL inside its array loops: chunks run side by side
            with ThreadPoolExecutor(max_workers=workers) as pool:
                for b, r in pool.map(fn, parts[1:]):
                    store(b, r)
        else:
            for b in parts[1:]:
                store(*fn(b))

    # the chunks are the parallel work: a BLAS that also starts threads for each small product only
    # fights them (20x slower here)
    with threadpool_limits(1, user_api="blas"):
        sweep(run, bounds)
        # the candidates whose verdict (or ranked number) hangs on the exact winding temperature, solved
        # together: the same function as for the rows shown, so their verdicts agree
        rows = np.flatnonzero(out.pop("open")) if "open" in out else np.zeros(0, dtype=np.intp)
        # in as few parts as memory allows: the exact solution is many small steps over (S, rows) arrays,
        # whose cost is mostly per step (and under the interpreter lock), not per row
        step = min(EXACT_CHUNK, chunk_rows(n_seg))
        sweep(run_exact, [rows[i:i + step] for i in range(0, len(rows), step)])
    return out