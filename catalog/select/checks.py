"""Checks: margins, verdicts and the reason texts of failed checks.

Every check gives a margin per candidate (``*_margin`` columns); a candidate
passes when every applicable margin is at least the envelope's required
margin.  Fractional margins are (limit − value)/limit (voltage: (available −
needed)/available); the temperature margin is Tmax − T_w in kelvin.  A check
whose data is missing is a failure of its own (``no ... data``), never a pass.
Reason texts are built column-wise with pandas string operations.
"""
from __future__ import annotations

__all__ = ["CHECKS", "run_checks", "reason_texts", "check_keys"]

import numpy as np
import pandas as pd

from .candidates import GEAR_ASSUMED, GEAR_CATALOGUE

#: check key → one-line description used by the reason counts.
CHECKS = {
    "voltage": "needs more voltage than the supply gives after the drive drop",
    "peak_current": "a segment needs more current than the drive's peak limit",
    "rms_current": "RMS current above the drive's continuous limit",
    "temperature": "winding too hot",
    "thermal_runaway": "thermal runaway (no steady winding temperature)",
    "thermal_data": "no thermal data: cannot check temperature",
    "motor_speed": "motor speed above its limit",
    "gear_speed": "gearhead input speed above its limit",
    "gear_peak_torque": "gearhead output torque above its intermittent rating",
    "gear_continuous_torque": "RMS gearhead output torque above its continuous rating",
    "gear_data": "no gearhead rating: cannot check the gearhead",
    "motor_data": "no motor constants: cannot check voltage",
    "speed_data": "no motor speed limit: cannot check speed",
    "diameter": "diameter above the limit",
    "length": "length above the limit",
    "mass": "mass above the limit",
    "price": "price above the limit",
    "size_data": "no size, mass or price data for a limit",
    "commutation": "commutation not allowed",
    "mount": "mount not allowed",
}

_RPM = 30.0 / np.pi


def _f(values, spec="{:.3g}"):
    return pd.Series([spec.format(v) for v in np.asarray(values, dtype=float)])


def _names(env, ix):
    return pd.Series(np.asarray(env.names, dtype=object)[np.asarray(ix, dtype=int)])


def _margin_note(margin, required, pct=True):
    need = required > 0
    text = (", margin " + _f(margin * 100, "{:.1f}") + " % < " + f"{required * 100:.3g} %") if pct else \
        (", margin " + _f(margin, "{:.1f}") + " K < " + f"{required:.3g} K")
    return text.where(pd.Series(need & (np.asarray(margin) >= 0), dtype=bool), "")


def run_checks(env, c: dict, r: dict, with_texts: bool = True):
    """Margins, failures and reason texts.

    Returns
    -------
    margins : dict
        check → margin array (N,) (fractions, temperature in K) for the shortlist.
    failed : dict
        check key of :data:`CHECKS` → boolean array (N,).
    texts : DataFrame
        One text column per check key (empty where the check passed); empty
        without ``with_texts`` (the verdicts never depend on the texts, so
        :func:`reason_texts` builds them later for the rows asked for).
    """
    n = _size(c)
    req = env.margins
    catalogue = c["kind"] == GEAR_CATALOGUE
    fails, texts, margins = {}, {}, {}

    def put(key, fail, text):
        fail = np.asarray(fail, bool)
        fails[key] = fail
        if with_texts:   # the text is a thunk: built only when asked for, and only if a row failed
            if not fail.any():
                texts[key] = pd.Series([""] * n, dtype=object)
                return
            text = text()
            texts[key] = pd.Series(text if isinstance(text, pd.Series) else [text] * n).where(fail, "")

    avail = env.available_voltage
    vm = r["voltage_margin"]
    margins["voltage_margin"] = vm
    no_motor = np.isnan(vm)
    put("motor_data", no_motor, lambda: "no motor constants: cannot check voltage (R, Kt or rotor inertia missing)")
    put("voltage", ~no_motor & (vm < req["voltage"]),
        lambda: "segment " + _names(env, r["voltage_seg"]) + ": needs " + _f(r["voltage_need"], "{:.1f}") + " V at "
        + _f(r["voltage_speed"] * _RPM, "{:.0f}") + " rpm" + pd.Series(np.where(r["voltage_hot"], " (hot)", " (cold)"))
        + f", has {avail:.1f} V after the drive drop" + _margin_note(vm, req["voltage"]))
    ipk = env.drive_peak_current
    pm = (ipk - r["peak_current"]) / ipk if np.isfinite(ipk) else np.full(n, np.nan)
    margins["peak_current_margin"] = pm
    put("peak_current", np.isfinite(ipk) & (pm < req["current"]),
        lambda: "segment " + _names(env, r["peak_current_seg"]) + ": needs " + _f(r["peak_current"]) + " A"
        + f", drive gives {ipk:.3g} A peak" + _margin_note(pm, req["current"]))
    icont = env.drive_continuous_current
    rm = (icont - r["rms_current"]) / icont if np.isfinite(icont) else np.full(n, np.nan)
    margins["rms_current_margin"] = rm
    word = "RMS current" if env.mode == "cycle" else "continuous current"
    put("rms_current", np.isfinite(icont) & (rm < req["current"]),
        lambda: word + " " + _f(r["rms_current"]) + f" A, drive gives {icont:.3g} A continuous"
        + _margin_note(rm, req["current"]))

    tw = r["winding_temperature"]
    tm = c["Tmax"] - tw
    margins["temperature_margin"] = tm
    put("thermal_data", r["thermal_missing"], lambda: "no thermal data: cannot check temperature")
    put("thermal_runaway", r["runaway"] & ~r["thermal_missing"],
        lambda: "thermal runaway: no steady winding temperature at " + _f(r["rms_current"]) + " A RMS")
    put("temperature", np.isfinite(tw) & (tm < req["temperature"]),
        lambda: "winding reaches " + _f(tw - 273.15, "{:.0f}") + " °C, limit " + _f(c["Tmax"] - 273.15, "{:.0f}")
        + " °C" + _margin_note(tm, req["temperature"], pct=False))

    sm = (c["max_speed"] - r["motor_speed"]) / c["max_speed"]
    margins["motor_speed_margin"] = sm
    no_speed = np.isnan(c["max_speed"])
    put("speed_data", no_speed, lambda: "no motor speed limit: cannot check speed")
    put("motor_speed", ~no_speed & (sm < req["speed"]),
        lambda: "segment " + _names(env, r["speed_seg"]) + ": motor at " + _f(r["motor_speed"] * _RPM, "{:.0f}")
        + " rpm, limit " + _f(c["max_speed"] * _RPM, "{:.0f}") + " rpm" + _margin_note(sm, req["speed"]))

    gs = np.where(catalogue, (c["gear_max_speed"] - r["motor_speed"]) / c["gear_max_speed"], np.nan)
    gp = np.where(catalogue, (c["gear_peak_torque"] - r["gear_out_peak"]) / c["gear_peak_torque"], np.nan)
    gc = np.where(catalogue, (c["gear_cont_torque"] - r["gear_out_rms"]) / c["gear_cont_torque"], np.nan)
    margins.update(gear_speed_margin=gs, gear_peak_torque_margin=gp, gear_continuous_torque_margin=gc)
    no_gear = catalogue & (np.isnan(gs) | np.isnan(gp) | np.isnan(gc))
    put("gear_data", no_gear, lambda: "no gearhead rating: cannot check the gearhead (speed or torque rating missing)")
    put("gear_speed", catalogue & (gs < req["speed"]),
        lambda: "segment " + _names(env, r["speed_seg"]) + ": gearhead input at " + _f(r["motor_speed"] * _RPM, "{:.0f}")
        + " rpm, limit " + _f(c["gear_max_speed"] * _RPM, "{:.0f}") + " rpm" + _margin_note(gs, req["speed"]))
    put("gear_peak_torque", catalogue & (gp < req["torque"]),
        lambda: "segment " + _names(env, r["gear_out_seg"]) + ": gearhead output " + _f(r["gear_out_peak"]) + " N·m, "
        "intermittent rating " + _f(c["gear_peak_torque"]) + " N·m" + _margin_note(gp, req["torque"]))
    put("gear_continuous_torque", catalogue & (gc < req["torque"]),
        lambda: ("RMS" if env.mode == "cycle" else "continuous") + " gearhead output " + _f(r["gear_out_rms"])
        + " N·m, continuous rating " + _f(c["gear_cont_torque"]) + " N·m" + _margin_note(gc, req["torque"]))

    lim_missing = np.zeros(n, bool)
    gaps = []   # (name, mask) of the limits without data, for the text
    for key, unit, scale in (("diameter", "mm", 1e3), ("length", "mm", 1e3), ("mass", "g", 1e3),
                             ("price", "", 1.0)):
        limit = env.limits.get(f"max_{key}")
        if limit is None:
            put(key, np.zeros(n, bool), lambda: "")
            continue
        value = c[key]
        gap = np.isnan(value)
        lim_missing |= gap
        gaps.append((key, gap))
        put(key, ~gap & (value > limit), lambda: key + " " + _f(value * scale, "{:.4g}") + f" {unit} > "
            + f"{limit * scale:.4g} {unit}".rstrip())
    put("size_data", lim_missing, lambda: "no data for a limit:" + _join(
        {k: np.where(g, " " + k, "") for k, g in gaps} or {"": np.full(n, "", dtype=object)}, ""))
    for key in ("commutation", "mount"):
        allowed = getattr(env, key)
        if allowed is None:
            put(key, np.zeros(n, bool), lambda: "")
            continue
        bad = ~pd.Series(c[key]).isin(allowed).to_numpy()
        put(key, bad, lambda: key + " " + pd.Series(c[key]).replace("", "unknown") + f" not in {', '.join(allowed)}")

    smallest = tm / (c["Tmax"] - env.ambient_temperature)
    for x in (vm, pm, rm, sm, gs, gp, gc):
        smallest = np.fmin(smallest, x)          # NaN (not checked) never wins
    margins["smallest_margin"] = smallest
    return margins, fails, (pd.DataFrame(texts) if with_texts else None), (_notes(c) if with_texts else None)


def check_keys(env) -> tuple:
    """The candidate columns :func:`run_checks` reads for ``env`` (limits and allowed lists only if set)."""
    keys = ["kind", "Tmax", "max_speed", "gear_max_speed", "gear_peak_torque", "gear_cont_torque"]
    keys += [k for k in ("diameter", "length", "mass", "price") if env.limits.get(f"max_{k}") is not None]
    keys += [k for k in ("commutation", "mount") if getattr(env, k) is not None]
    return tuple(keys)


def reason_texts(env, c: dict, r: dict, rows=None) -> tuple:
    """(failed keys, reasons, notes) as object arrays, for the candidate positions ``rows`` of ``c``
    and ``r`` (or for all of them when ``c`` and ``r`` already hold just the rows wanted).

    The checks are row-wise, so running them on the rows asked for gives the
    same texts as on the whole table, at the cost of those rows only.
    """
    if rows is None:
        sub, res = c, r
    else:
        rows = np.asarray(rows, dtype=int)
        n = _size(c)
        take = (lambda d: {k: (v[rows] if isinstance(v, np.ndarray) and v.ndim and len(v) == n else v)
                           for k, v in d.items()})
        sub, res = (c.take(rows) if hasattr(c, "take") else take(c)), take(r)
    _, failed, texts, notes = run_checks(env, sub, res)
    keys = _join({k: np.where(failed[k], k, "") for k in failed}, ", ")
    reasons = _join({k: texts[k].to_numpy(dtype=object) for k in texts}, "; ")
    return keys, reasons, notes.to_numpy(dtype=object)


def _join(columns: dict, sep: str) -> np.ndarray:
    """Row-wise join of the non-empty strings of several columns, column by column (no row loop)."""
    out = None
    for values in columns.values():
        v = pd.Series(values, dtype=object).fillna("").astype(str)
        if out is None:
            out = v
            continue
        both = (out != "") & (v != "")
        out = out + np.where(both, sep, "") + v
    n = len(next(iter(columns.values()))) if columns else 0
    return (out if out is not None else pd.Series([""] * n)).to_numpy(dtype=object)


def _size(c) -> int:
    """Number of candidates of a :class:`~catalog.select.candidates.Candidates` or a dict of arrays."""
    return c.size if hasattr(c, "size") and not isinstance(c, dict) else len(c["ratio"])


def _notes(c):
    n = _size(c)
    notes = pd.Series([""] * n)
    notes = notes.where(~c["speed_from_no_load"], "motor speed limit taken from the no-load speed")
    assumed = c["kind"] == GEAR_ASSUMED
    gear_note = pd.Series(np.where(assumed, "assumed gear: ratings, mass, size and price not included", ""))
    out = notes + np.where((notes != "") & (gear_note != ""), "; ", "") + gear_note
    extra = pd.Series(c.get("price_note", np.full(n, "", dtype=object)))
    extra_motor = pd.Series(c.get("motor_note", np.full(n, "", dtype=object)))
    for more in (extra, extra_motor):
        out = out + np.where((out != "") & (more != ""), "; ", "") + more
    return out
