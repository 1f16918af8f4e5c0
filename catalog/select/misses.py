"""Closest misses: the rejected candidates that fail by the least, and what one number would make them pass.

The shortfall of a failed check is measured on the scale of its margin in the
check registry (:mod:`catalog.select.registry`): for a fractional margin
(limit − value)/limit it is the required margin minus the margin (a voltage
margin of −4 % against a required 5 % is 0.09 short); for a margin with a
``normalise`` rule (the temperature: (T_max − T_w)/(T_max − T_a)) the same
difference taken through that rule.  A size, mass or price limit is short by
(value − limit)/limit.  A check without a measure (missing data, thermal
runaway, a commutation or mount not allowed) has no finite shortfall: such a
candidate is not a near miss and is never listed.  A candidate's shortfall is
the sum over its failed checks (two checks missed by 5 % are further off than
one missed by 6 %); the closest misses are the smallest sums, ties in
candidate order.

Where one number of the envelope says what would make a failed check pass,
the miss carries it:

* ``voltage``: the lowest ``supply.min_voltage`` that gives the needed
  voltage with the required margin after the drive drop,
  V_min = V_need/(1 − m_req) + V_drop (the currents, and so the needed
  voltage, do not depend on the supply in this model);
* ``peak_current`` / ``rms_current``: the drive current that would do,
  I/(1 − m_req);
* ``temperature``: the kelvin missing to the limit with its required margin;
* a ratio: for a candidate failing a check the gear ratio changes (voltage,
  currents, temperature, speeds, inertia ratio), the assumed gear of this
  motor nearest in ratio that clears every such check, searched over
  :data:`RATIO_GRID_STEPS` log-spaced ratios from 1 to :data:`RATIO_GRID_MAX`
  (or ten times the envelope's largest ratio).

Suggested voltages and currents are rounded up to three significant digits,
so the envelope written with them passes that check.
"""
from __future__ import annotations

__all__ = ["closest_misses", "shortfalls", "check_miss_count", "MISS_COLUMNS", "MISS_DIMENSIONS", "DEFAULT_MISSES",
           "RATIO_DEPENDENT", "RATIO_GRID_STEPS", "RATIO_GRID_MAX"]

import dataclasses
import math

import numpy as np
import pandas as pd

from .registry import LIMITS, REGISTRY, CheckInputs

#: Closest misses listed when nothing passes and no number was asked for.
DEFAULT_MISSES = 5
#: Checks whose margin the gear ratio changes (a ratio may clear them).
RATIO_DEPENDENT = ("voltage", "peak_current", "rms_current", "temperature", "thermal_runaway", "motor_speed",
                   "gear_speed", "inertia_ratio")
RATIO_GRID_STEPS = 240     #: ratios tried per motor [-]
RATIO_GRID_MAX = 1000.0    #: largest ratio tried unless the envelope goes further [1]

#: The columns of :func:`closest_misses`, in order, and the dimension of each number (SI).
MISS_DIMENSIONS = {
    "miss": "count",
    "shortfall": "dimensionless",
    "min_voltage_needed": "voltage",
    "drive_peak_current_needed": "current",
    "drive_continuous_current_needed": "current",
    "temperature_missing": "temperature_difference",
    "ratio_that_would_do": None,
    "ratio": None,
}
MISS_COLUMNS = ["miss", "candidate", "motor", "gear", "ratio", "shortfall", "failed", "suggestions",
                "min_voltage_needed", "drive_peak_current_needed", "drive_continuous_current_needed",
                "temperature_missing", "ratio_that_would_do", "reasons"]


def _round_up(value: np.ndarray, digits: int = 3) -> np.ndarray:
    """``value`` rounded up to ``digits`` significant digits (NaN stays NaN)."""
    v = np.asarray(value, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = 10.0 ** (np.floor(np.log10(np.abs(v))) - (digits - 1))
        out = np.ceil(v / scale * (1 - 1e-12)) * scale
    return np.where(np.isfinite(v) & (v > 0), np.round(out, 12), v)


def shortfalls(env, c, r: dict) -> dict:
    """check key -> shortfall (N,) of the candidates ``c`` with evaluation and margins ``r``:
    0 where the check passed, the normalised shortfall where it failed (inf without a measure)."""
    n = len(r["passed"])
    x = CheckInputs(env, c, r, n)
    out = {}
    for check in REGISTRY:
        failed = np.asarray(r["fails_" + check.key], dtype=bool)
        short = np.zeros(n)
        if not failed.any():
            out[check.key] = short
            continue
        x.check = check
        margin = check.margin
        part = np.full(n, np.inf)
        with np.errstate(invalid="ignore", divide="ignore"):
            if margin is not None and (check.normalise is not None or margin.is_fraction):
                m = np.asarray(r[margin.column], dtype=float)
                need = np.full(n, x.required())
                if check.normalise is not None:
                    m, need = (np.asarray(check.normalise(x, v), dtype=float) for v in (m, need))
                part = need - m
            elif check.key in {k for k, _, _ in LIMITS}:
                limit = env.limits[f"max_{check.key}"]
                part = (np.asarray(c[check.key], dtype=float) - limit) / limit
        part = np.where(np.isfinite(part), np.fmax(part, 0.0), np.inf)
        out[check.key] = np.where(failed, part, 0.0)
    return out


def _ratio_trial(env, cand, rows, keys) -> dict:
    """motor row -> sorted (ratio, passes the ratio-dependent checks) of an assumed-gear trial."""
    from .candidates import Candidates, build_candidates
    from .envelope import ratio_label
    from .evaluate import checked

    top = max(RATIO_GRID_MAX, 10.0 * max(env.ratios, default=1.0))
    grid = sorted({ratio_label(float(v)) for v in np.geomspace(1.0, top, RATIO_GRID_STEPS)})
    trial_env = dataclasses.replace(env, ratios=grid, direct=False, catalogue_gears=False)
    options = build_candidates(pd.DataFrame(), pd.DataFrame(), trial_env).options
    motors = np.unique(cand.motor_ix[rows])
    n_opt = len(options["kind"])
    trial = Candidates(np.repeat(motors, n_opt), np.tile(np.arange(n_opt), len(motors)), cand.motors, options)
    c = trial.take(slice(None), keys)
    r = checked(trial_env, c, energy=False, where=False)
    ok = ~np.logical_or.reduce([np.asarray(r["fails_" + k], dtype=bool) for k in RATIO_DEPENDENT
                                if "fails_" + k in r])
    shape = (len(motors), n_opt)
    ratios = np.asarray(c["ratio"], dtype=float).reshape(shape)
    eff = np.asarray(c["efficiency"], dtype=float).reshape(shape)
    return {int(m): (ratios[i], ok.reshape(shape)[i], eff[i]) for i, m in enumerate(motors)}


def closest_misses(selection, n: int) -> pd.DataFrame:
    """The ``n`` rejected candidates of ``selection`` with the smallest summed shortfall, and what would
    make them pass (columns :data:`MISS_COLUMNS`, SI; ``suggestions`` one text per miss)."""
    from .checks import check_keys, reason_texts
    from .evaluate import EVAL_KEYS, checked, evaluate_all

    env, cand = selection.envelope, selection.candidates
    keys = tuple(dict.fromkeys(EVAL_KEYS + check_keys(env) + tuple(k for k, _, _ in LIMITS)))
    empty = pd.DataFrame({k: pd.Series(dtype=object if k in ("candidate", "motor", "gear", "failed",
                                                             "suggestions", "reasons") else float)
                          for k in MISS_COLUMNS})
    if cand is None or not cand.size:
        return empty
    margins = [c.margin.column for c in REGISTRY if c.margin is not None]
    res = evaluate_all(env, cand, energy=False, keep=margins)
    failing = np.flatnonzero(~np.asarray(res["passed"], dtype=bool))
    if not len(failing):
        return empty
    # the shortfall of every failing candidate, chunk by chunk of rows (candidate columns gathered per chunk)
    total = np.empty(len(failing))
    step = 65536
    for start in range(0, len(failing), step):
        rows = failing[start:start + step]
        c = cand.take(rows, keys)
        r = {k: np.asarray(v)[rows] for k, v in res.items()}
        total[start:start + step] = np.sum(list(shortfalls(env, c, r).values()), axis=0)
    finite = np.isfinite(total)
    order = np.argsort(total[finite], kind="stable")[:n]
    rows = failing[finite][order]
    if not len(rows):
        return empty
    c = cand.take(rows)
    r = checked(env, {k: c[k] for k in keys}, energy=False)
    short = shortfalls(env, c, r)
    failed, reasons, _ = reason_texts(env, c, r)
    fails = {k: np.asarray(r["fails_" + k], dtype=bool) for k in (ch.key for ch in REGISTRY)}
    m = len(rows)
    required = env.margins
    with np.errstate(invalid="ignore", divide="ignore"):
        volt = np.where(fails["voltage"], _round_up(r["voltage_need"] / (1.0 - required.get("voltage", 0.0))
                                                    + env.drive_voltage_drop), np.nan)
        cur = 1.0 - required.get("current", 0.0)
        peak = np.where(fails["peak_current"], _round_up(r["peak_current"] / cur), np.nan)
        cont = np.where(fails["rms_current"], _round_up(r["rms_current"] / cur), np.nan)
        t_margin = np.asarray(r["temperature_margin"], dtype=float)
        t_missing = np.where(fails["temperature"] & np.isfinite(t_margin),
                             _round_up(required.get("temperature", 0.0) - t_margin), np.nan)
    ratio_dep = np.logical_or.reduce([fails[k] for k in RATIO_DEPENDENT if k in fails])
    would, would_eff = np.full(m, np.nan), np.full(m, np.nan)
    if ratio_dep.any():
        trial = _ratio_trial(env, cand, rows[ratio_dep], keys)
        for i in np.flatnonzero(ratio_dep):   # a handful of misses, one lookup each
            ratios, ok, eff = trial[int(c["motor_ix"][i])]
            if ok.any():
                good = np.flatnonzero(ok)
                best = good[np.argmin(np.abs(np.log(ratios[good] / float(c["ratio"][i]))))]
                would[i], would_eff[i] = ratios[best], eff[best]
    texts = []
    for i in range(m):
        parts = []
        if np.isfinite(volt[i]):
            parts.append(f"supply.min_voltage {volt[i]:.3g} V would do")
        if np.isfinite(peak[i]):
            parts.append(f"supply.drive_peak_current {peak[i]:.3g} A would do")
        if np.isfinite(cont[i]):
            also = (" (with drive_peak_current at least as much)"
                    if cont[i] > env.drive_peak_current and not np.isfinite(peak[i]) else "")
            parts.append(f"supply.drive_continuous_current {cont[i]:.3g} A would do{also}")
        if np.isfinite(t_missing[i]):
            parts.append(f"{t_missing[i]:.3g} K of temperature margin missing")
        if np.isfinite(would[i]):
            cleared = [k for k in RATIO_DEPENDENT if k in fails and fails[k][i]]
            parts.append(f"an assumed gear of ratio {would[i]:g} (efficiency {would_eff[i]:.3g}) clears "
                         f"{', '.join(cleared)}")
        elif ratio_dep[i]:
            parts.append("no ratio up to "
                         f"{max(RATIO_GRID_MAX, 10.0 * max(env.ratios, default=1.0)):g} clears "
                         + ", ".join(k for k in RATIO_DEPENDENT if k in fails and fails[k][i]))
        texts.append("; ".join(parts))
    out = pd.DataFrame({
        "miss": np.arange(1, m + 1), "candidate": c["id"], "motor": c["motor"], "gear": c["gear"],
        "ratio": c["ratio"], "shortfall": np.sum(list(short.values()), axis=0), "failed": failed,
        "suggestions": np.asarray(texts, dtype=object), "min_voltage_needed": volt,
        "drive_peak_current_needed": peak, "drive_continuous_current_needed": cont,
        "temperature_missing": t_missing, "ratio_that_would_do": would, "reasons": reasons})
    return out[MISS_COLUMNS]


def check_miss_count(n) -> int:
    """``n`` as a whole number of at least 1, else :class:`~catalog.errors.InputError` (one line)."""
    from ..errors import InputError, Problem

    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1 or (isinstance(n, float)
                                                                               and not math.isfinite(n)):
        message = f"{n!r} is not allowed, expected a whole number of at least 1"
        raise InputError(f"misses: {message}", [Problem("misses", None, None, message)])
    return int(n)
