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

__all__ = ["evaluate", "at_corners", "checked", "evaluate_all", "checked_in_chunks", "chunk_rows", "CHUNK",
           "CHUNK_BYTES", "WORKERS", "SHORT_PERIOD", "FALLBACK_TEMPERATURE"]

import os
import threading
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ..physics import (energy_per_cycle, network_capacity_maps, network_peak_rise, network_peak_rise_grid,
                       network_response)
from ..physics import hot_winding_rise as _hot_winding_rise
from ..physics import resistance_at_temperature as _resistance_at_temperature
from ..physics import torque_constant_at_temperature as _torque_constant_at_temperature
from ..physics.network import NetworkMaps

# The physics functions without their container conversion (arrays in, arrays out here): the
# wrapper's checks cost more than the arithmetic on a chunk of a few hundred rows.
hot_winding_rise = _hot_winding_rise.__wrapped__
resistance_at_temperature = _resistance_at_temperature.__wrapped__
torque_constant_at_temperature = _torque_constant_at_temperature.__wrapped__

CHUNK = 16384            #: candidates per chunk at most [-]
#: Scratch memory of one chunk [bytes]: its (S, N) arrays (about :data:`_SEGMENT_ARRAYS` of
#: them) stay within this whatever the number of segments S, so a chunk holds fewer candidates
#: the longer the cycle (:func:`chunk_rows`).
CHUNK_BYTES = 64 * 2**20
#: The network's response matrices of a chunk's motors ((S + 1) x S each) are used where they fit
#: in this [bytes]; else the network is swept segment by segment (the same numbers).
RESPONSE_BYTES = 64 * 2**20
#: The network maps of every motor of the catalogue (9 arrays of M x S) are built once where they
#: fit in this [bytes]; else each chunk builds those of its own motors.
MAPS_BYTES = 256 * 2**20
_SEGMENT_ARRAYS = 16
SHORT_PERIOD = 0.02      #: period/τ_w below which a repeated cycle is judged by its mean loss [1]
WORKERS = max(1, min(4, os.cpu_count() or 1))  #: chunks evaluated at once (threads) [-]
FALLBACK_TEMPERATURE = 428.15  #: winding temperature assumed where thermal data is missing [K]

THERMAL_FIELDS = ("thermal_resistance_winding_housing", "thermal_resistance_housing_ambient",
                  "max_winding_temperature")
#: the candidate columns :func:`evaluate` reads
EVAL_KEYS = ("motor_ix", "terminal_resistance", "torque_constant", "back_emf_constant", "friction_torque",
             "rotor_inertia", "gear_inertia", "thermal_resistance_winding_housing",
             "thermal_resistance_housing_ambient", "thermal_time_constant_winding", "thermal_time_constant_motor",
             "max_winding_temperature", "resistance_reference_temperature", "magnet_coefficient", "ratio",
             "efficiency", "winding_heat_capacity", "housing_heat_capacity")
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
            "voltage_basis": np.ascontiguousarray(np.column_stack([basis, w_mid])),
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
    size = int(np.prod(shape))
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


def _cold_rise(env, c, t_sq, usable, motor_maps=None):
    """Peak winding rise per (N·m)² of T_em², (N,), NaN where unusable: the network is linear, so the
    rise under the losses at ambient is this times R(Ta)/Kt(Ta)².  ``t_sq`` is (S, N)."""
    n = t_sq.shape[1]
    rth = c["thermal_resistance_winding_housing"] + c["thermal_resistance_housing_ambient"]
    out = np.full(n, np.nan)
    if env.mode == "points":
        cont = env.continuous
        worst = np.max(t_sq[cont], axis=0) if cont.any() else np.zeros(n)
        return np.where(usable, worst * rth, np.nan)
    dur = env.duration
    mean_rule = env.repeat & (env.period < SHORT_PERIOD * c["thermal_time_constant_winding"])
    if mean_rule.any():
        pick = usable & mean_rule
        out[pick] = ((dur @ t_sq) / env.period * rth)[pick]
    net = usable & ~mean_rule
    if not net.any():
        return out
    whole = bool(net.all())
    ix = slice(None) if whole else np.flatnonzero(net)
    sub = t_sq if whole else t_sq[:, ix]
    mix = c["motor_ix"][ix]
    starts, runs = _motor_runs(mix)
    first = np.arange(n)[ix][starts]
    if motor_maps is not None:      # built once for every motor of the catalogue
        maps = NetworkMaps(*(a[mix[starts]] if a.ndim > 1 else a for a in motor_maps))
    else:
        maps = network_capacity_maps(dur, *(c[k][first] for k in THERMAL_NETWORK_FIELDS), periodic=bool(env.repeat))
    regular = bool(np.all(runs == runs[0]))
    fits = len(starts) * (len(dur) + 1) * len(dur) * 8 <= RESPONSE_BYTES
    if motor_maps is not None and regular and fits:   # a regular block: one matmul per motor
        # (built here for the chunk's few motors: small arrays, reused memory)
        peak = network_peak_rise_grid(sub.reshape(len(dur), len(starts), int(runs[0])),
                                      network_response(maps)).reshape(-1)
    elif regular:     # a regular block (motor × ratios): the maps broadcast, no gather
        grid = NetworkMaps(*(a[:, None] if a.ndim > 1 else a for a in maps))
        peak = network_peak_rise(sub.reshape(len(dur), len(starts), int(runs[0])), grid,
                                 segments_first=True).reshape(-1)
    else:
        owner = np.repeat(np.arange(len(starts)), runs)
        peak = network_peak_rise(sub, NetworkMaps(*(a[owner] if a.ndim > 1 else a for a in maps)),
                                 segments_first=True)
    out[ix] = peak
    return out


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


@_quiet
def evaluate(env, c: dict, detail: bool = False, energy: bool = True, seg: dict | None = None,
             where: bool = True) -> dict:
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

    Notes
    -----
    Arrays are laid out segments first, (S, N), so that every per-segment
    step works on contiguous rows; the torque and voltage of every segment
    are one small matrix product each, since both are linear in a handful of
    per-candidate coefficients.
    """
    seg = _segments(env) if seg is None else seg
    n = len(c["terminal_resistance"])
    # kernel symbols (glossary in DEVELOPERS.md): R, Kt, Ke at the reference temperature t_ref, β
    R, Kt, Ke = c["terminal_resistance"], c["torque_constant"], c["back_emf_constant"]
    t_ref, beta = c["resistance_reference_temperature"], c["magnet_coefficient"]
    ta = env.ambient_temperature
    ratio, eta = c["ratio"], c["efficiency"]
    back = eta if env.back_drive else 1.0 / eta
    # T_em = (J + Jg)·n·α + T_out/(n·η) (driving) or T_out·η/n (back-driven) + Tf·sign(ω): linear in 4 terms
    n_seg = len(seg["w0"])
    coef = _buffer("coef", (4, n))
    np.multiply(c["rotor_inertia"] + c["gear_inertia"], ratio, out=coef[0])
    np.divide(1.0, ratio * eta, out=coef[1])
    np.divide(back, ratio, out=coef[2])
    coef[3] = c["friction_torque"]
    t_em = np.matmul(seg["basis"], coef, out=_buffer("t_em", (n_seg, n)))   # (S, N)
    t_sq = np.multiply(t_em, t_em, out=_buffer("t_sq", (n_seg, n)))

    # cold constants and the losses at ambient
    r_amb = resistance_at_temperature(R, ta, t_ref)
    kt_amb = torque_constant_at_temperature(Kt, ta, beta, t_ref)
    ke_amb = torque_constant_at_temperature(Ke, ta, beta, t_ref)
    fields = THERMAL_FIELDS + (CYCLE_THERMAL_FIELDS if env.mode == "cycle" else ())
    missing = np.zeros(n, bool)
    for name in fields:
        missing |= np.isnan(c[name])
    usable = ~missing & (r_amb > 0) & (kt_amb > 0)
    rise = _cold_rise(env, c, t_sq, usable, seg.get("motor_maps")) * (r_amb / (kt_amb * kt_amb))
    # the hot fixed point: R and Kt at the peak winding temperature
    slope_r = resistance_at_temperature(R, ta + 1.0, t_ref) - r_amb
    slope_k = torque_constant_at_temperature(Kt, ta + 1.0, beta, t_ref) - kt_amb
    hot = hot_winding_rise(rise, slope_r / r_amb, slope_k / kt_amb)
    runaway = usable & np.isinf(hot)
    fallback = np.where(np.isnan(c["max_winding_temperature"]), FALLBACK_TEMPERATURE, c["max_winding_temperature"])
    tw_eval = np.where(usable & ~runaway, ta + hot, fallback)
    reported = np.where(missing, np.nan, np.where(runaway, np.inf, ta + hot))
    r_hot = resistance_at_temperature(R, tw_eval, t_ref)
    kt_hot = torque_constant_at_temperature(Kt, tw_eval, beta, t_ref)
    ke_hot = torque_constant_at_temperature(Ke, tw_eval, beta, t_ref)

    # needed voltage: |R/Kt·T_em + Ke·n·ω| at the segment ends = |… at the mid speed| + Ke·n·|Δω|/2
    need, worse = None, None
    spread = _buffer("spread", (n_seg, n))
    for corner, (r, kt, ke) in enumerate(((r_amb, kt_amb, ke_amb), (r_hot, kt_hot, ke_hot))):
        emf = ke * ratio
        terms = _buffer("terms", (5, n))
        np.multiply(coef, r / kt, out=terms[:4])
        terms[4] = emf
        v = np.matmul(seg["voltage_basis"], terms, out=_buffer(("need", "v")[corner], (n_seg, n)))  # at mid speed
        np.abs(v, out=v)
        v += np.multiply.outer(seg["half_span"], emf, out=spread)
        if need is None:
            need = v
        else:
            worse = v >= need if detail else None
            np.fmax(need, v, out=need)
    need_w = np.fmax.reduce(need, axis=0)                              # NaN (no constants) never wins
    avail = env.available_voltage
    sq_top = np.maximum.reduce(t_sq, axis=0)
    peak_current = np.sqrt(sq_top) / kt_hot
    found = {}
    if where:
        rows = np.arange(n)
        v_seg = _argmax_rows(need, need_w)
        t_w = t_em[v_seg, rows]
        corners = [(r / kt * t_w, ke * ratio) for r, kt, ke in ((r_amb, kt_amb, ke_amb), (r_hot, kt_hot, ke_hot))]
        w0, w1 = seg["w0"][v_seg], seg["w1"][v_seg]
        ends = [[np.abs(drop + emf * w) for w in (w0, w1)] for drop, emf in corners]
        found = {"voltage_seg": v_seg, "voltage_hot": np.fmax(*ends[1]) >= np.fmax(*ends[0]),
                 "voltage_speed": ratio * np.where(np.fmax(ends[0][0], ends[1][0]) >= np.fmax(ends[0][1], ends[1][1]),
                                                   np.abs(w0), np.abs(w1)),
                 "peak_current_seg": _argmax_rows(t_sq, sq_top), "speed_seg": np.full(n, seg["speed_seg"]),
                 "gear_out_seg": np.full(n, seg["gear_out_seg"])}
    if env.mode == "cycle":
        i_rms = np.sqrt((env.duration @ t_sq) / env.period) / kt_hot
    else:
        cont = env.continuous
        i_rms = (np.sqrt(np.max(t_sq[cont], axis=0)) / kt_hot) if cont.any() else np.zeros(n)
    e = np.full(n, np.nan)
    if energy and env.mode == "cycle":
        i_hot = (t_em / kt_hot).T
        i_abs = np.abs(i_hot)
        drop = (t_em * (r_hot / kt_hot)).T
        emf = (ke_hot * ratio)[:, None]
        vh0, vh1 = drop + emf * seg["w0"], drop + emf * seg["w1"]
        e = energy_per_cycle(vh0 * i_hot + env.drive_voltage_drop * i_abs, env.duration,
                             vh1 * i_hot + env.drive_voltage_drop * i_abs, regenerative=env.regenerative)
    out = {
        "winding_temperature": reported, "runaway": runaway, "thermal_missing": missing, "voltage_temperature": tw_eval,
        "rms_current": i_rms, "peak_current": peak_current,
        "voltage_margin": (avail - need_w) / avail, "voltage_need": need_w,
        "motor_speed": ratio * seg["w_abs_max"],
        "gear_out_peak": np.full(n, seg["t_out_abs"][seg["gear_out_seg"]]),
        "gear_out_rms": np.full(n, seg["out_rms"]), "energy_per_cycle": e, **found,
    }
    if detail:   # copies: the scratch arrays are used again by the next chunk
        t_m = t_em - np.multiply.outer(seg["friction_sign"], c["friction_torque"])
        out.update(seg_motor_torque=t_m.T.copy(), seg_em_torque=t_em.T.copy(), seg_current=(t_em / kt_hot).T,
                   seg_voltage=need.T.copy(), seg_speed_start=np.multiply.outer(ratio, seg["w0"]),
                   seg_speed_end=np.multiply.outer(ratio, seg["w1"]),
                   seg_gear_torque=np.broadcast_to(seg["t_out_abs"], (n, len(seg["w0"]))),
                   seg_hot_worse=worse.T.copy())
    return out


def _chunk_starts(motor_ix, total: int, size: int = CHUNK) -> list:
    """Chunk boundaries near every ``size`` rows, moved to the start of a motor's run (so a
    regular block of motor × ratios stays whole and its thermal maps broadcast); a motor with
    more than ``size`` candidates is split, so no chunk holds more than ``size``."""
    if total <= size:
        return [0]
    run_starts = np.flatnonzero(np.r_[True, motor_ix[1:] != motor_ix[:-1]])
    cuts = np.searchsorted(run_starts, np.arange(0, total, size))
    starts = np.unique(run_starts[np.minimum(cuts, len(run_starts) - 1)])
    bounds = np.r_[starts, total]
    if np.all(np.diff(bounds) <= size):
        return [int(s) for s in starts]
    return [int(s) for lo, hi in zip(bounds[:-1], bounds[1:]) for s in range(lo, hi, size)]


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
            where: bool = True) -> dict:
    """:func:`at_corners` plus the checks (no texts) of candidate rows ``c``.

    Adds every margin, ``fails_<check>`` per check, ``passed`` and, with
    ``where``, ``worst_seg`` (the segment of the smallest of the voltage,
    peak-current and speed margins) to the evaluation.
    """
    from .checks import CHECKS, run_checks

    r = at_corners(env, c, detail=detail, energy=energy, seg=seg, where=where)
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
        with np.errstate(all="ignore"):
            seg["motor_maps"] = network_capacity_maps(env.duration, *(mt[k] for k in THERMAL_NETWORK_FIELDS),
                                                      periodic=bool(env.repeat))
    starts = _chunk_starts(np.asarray(cand.motor_ix if is_set else cand["motor_ix"]), total, chunk_rows(n_seg))
    bounds = list(zip(starts, starts[1:] + [total]))
    keys = tuple(dict.fromkeys(EVAL_KEYS + check_keys(env)))
    wanted = None if keep is None else {"passed", *("fails_" + k for k in CHECKS), *keep}
    out: dict = {}

    def run(b):
        c = cand.take(slice(*b), keys) if is_set else {k: v[b[0]:b[1]] for k, v in cand.items() if k in keys}
        r = checked(env, c, energy=energy, seg=seg, where=wanted is None)
        return b, (r if wanted is None else {k: v for k, v in r.items() if k in wanted})

    def store(b, r):
        if not out:
            for k, v in r.items():
                out[k] = np.empty(total, dtype=np.asarray(v).dtype)
        for k, v in r.items():
            out[k][b[0]:b[1]] = v

    workers = min(len(bounds), WORKERS)
    # the chunks are the parallel work: a BLAS that also starts threads for each small product only
    # fights them (20x slower here)
    with threadpool_limits(1, user_api="blas"):
        store(*run(bounds[0]))
        if workers > 1:   # numpy releases the GIL inside its array loops: chunks run side by side
            with ThreadPoolExecutor(max_workers=workers) as pool:
                for b, r in pool.map(run, bounds[1:]):
                    store(b, r)
        else:
            for b in bounds[1:]:
                store(*run(b))
    return out
