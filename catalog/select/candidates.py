"""Candidates: every motor combined with every gear option of an envelope.

A candidate is one motor with one gear option: direct drive (ratio 1, no
gear), a catalogue gearhead whose ``mount`` equals the motor's, or an assumed
gear of the envelope's ratio search (efficiency ``stage_efficiency**stages``,
inertia ``gearing.inertia``, no ratings, mass, size or price).  The candidate
table is built with pandas joins and numpy repeats, never a loop per motor.

Motor values get the envelope's tolerance corner here (Kt and Ke scaled by
``1 + tolerance.torque_constant``, R by ``1 + tolerance.terminal_resistance``)
and the housing-to-ambient thermal resistance is multiplied by the
envelope's housing cooling factor, so every later check sees the shifted
values.
"""
from __future__ import annotations

__all__ = ["build_candidates", "GEAR_DIRECT", "GEAR_CATALOGUE", "GEAR_ASSUMED"]

import numpy as np
import pandas as pd

from ..physics import (CONSERVATIVE_MAGNET_COEFFICIENT, DEFAULT_REFERENCE_TEMPERATURE,
                       magnet_coefficient)

GEAR_DIRECT, GEAR_CATALOGUE, GEAR_ASSUMED = 0, 1, 2

_MOTOR = ["terminal_resistance", "torque_constant", "back_emf_constant", "friction_torque",
          "rotor_inertia", "thermal_resistance_winding_housing", "thermal_resistance_housing_ambient",
          "thermal_time_constant_winding", "thermal_time_constant_motor", "max_winding_temperature",
          "resistance_reference_temperature", "max_speed", "no_load_speed", "mass", "length",
          "diameter", "price"]
_GEAR = ["ratio", "efficiency", "inertia", "max_continuous_torque", "max_intermittent_torque",
         "max_input_speed", "mass", "length", "diameter", "price"]


def _prices(frame, env):
    """Prices of catalogue rows in the envelope's currency, and a note where there is none.

    Without ``ranking.currency`` prices are left in their own currency (``currency``
    column); with it, other currencies are converted by ``ranking.exchange_rates``,
    and a price in a currency without a rate becomes NaN with a note.
    """
    price = _col(frame, "price")
    cur = _col(frame, "currency", object).fillna("").astype(str).to_numpy(dtype=object)
    note = np.full(len(frame), "", dtype=object)
    if env.currency is None:
        return price, cur, note
    rates = {env.currency: 1.0, **env.exchange_rates}
    factor = np.array([rates.get(c, np.nan) for c in cur], dtype=float)
    missing = ~np.isnan(price) & np.isnan(factor)
    note[missing] = [f"no exchange rate for {c or 'a price without currency'}" for c in cur[missing]]
    cur = np.where(np.isnan(price), "", env.currency).astype(object)
    return price * factor, cur, note


def _col(frame, name, dtype=float):
    if name in frame.columns:
        return frame[name].to_numpy(dtype=dtype, na_value=np.nan) if dtype is float else frame[name]
    return np.full(len(frame), np.nan) if dtype is float else pd.Series([None] * len(frame))


def _magnet_coefficients(materials: pd.Series) -> np.ndarray:
    """β per motor [1/K]: looked up once per distinct material; unknown → conservative."""
    keys = materials.fillna("unknown").astype(str).str.strip().str.lower()
    table = {}
    for key in keys.unique():   # a handful of materials, not one per motor
        try:
            table[key] = magnet_coefficient(key, missing=CONSERVATIVE_MAGNET_COEFFICIENT)
        except ValueError:
            table[key] = CONSERVATIVE_MAGNET_COEFFICIENT
    return keys.map(table).to_numpy(dtype=float)


def _stages(ratio: np.ndarray) -> np.ndarray:
    """One stage per factor of about 7 in ratio [-]."""
    return np.maximum(1, np.ceil(np.log(ratio) / np.log(7.0) - 1e-9))


def build_candidates(motors: pd.DataFrame, gearheads: pd.DataFrame, env) -> dict:
    """Every candidate of the envelope as flat arrays.

    Parameters
    ----------
    motors, gearheads : DataFrame
        Catalogue frames in SI with canonical columns.
    env : Envelope
        The load envelope.

    Returns
    -------
    dict
        ``id``, ``motor``, ``gear`` (object arrays), ``kind`` (GEAR_*), and per
        candidate motor values (``R`` [Ω], ``Kt``/``Ke`` [N·m/A], ``Tf`` [N·m],
        ``J`` [kg·m²], ``Rth1``/``Rth2`` [K/W], ``tau_w``/``tau_m`` [s], ``Tmax``
        [K], ``Tref`` [K], ``beta`` [1/K], ``max_speed`` [rad/s], ...), gear
        values (``ratio`` [1], ``eta`` [1], ``Jg`` [kg·m²], ratings) and totals
        (``mass`` [kg], ``length`` [m], ``diameter`` [m], ``price``).
    """
    m = motors.reset_index(drop=True)
    k_scale = 1.0 + env.tolerance.get("torque_constant", 0.0)
    r_scale = 1.0 + env.tolerance.get("terminal_resistance", 0.0)
    mv = {c: _col(m, c) for c in _MOTOR}
    mv["torque_constant"] = mv["torque_constant"] * k_scale
    mv["back_emf_constant"] = np.where(np.isnan(mv["back_emf_constant"]), mv["torque_constant"],
                                       mv["back_emf_constant"] * k_scale)
    mv["terminal_resistance"] = mv["terminal_resistance"] * r_scale
    mv["thermal_resistance_housing_ambient"] = (mv["thermal_resistance_housing_ambient"]
                                                * env.housing_cooling_factor)
    mv["resistance_reference_temperature"] = np.where(
        np.isnan(mv["resistance_reference_temperature"]), DEFAULT_REFERENCE_TEMPERATURE,
        mv["resistance_reference_temperature"])
    mv["price"], motor_currency, motor_price_note = _prices(m, env)
    beta = _magnet_coefficients(_col(m, "magnet_material", object))
    speed_from_no_load = np.isnan(mv["max_speed"]) & ~np.isnan(mv["no_load_speed"])
    mv["max_speed"] = np.where(speed_from_no_load, mv["no_load_speed"], mv["max_speed"])
    ids = m["id"].astype(str).to_numpy(dtype=object)
    mount = _col(m, "mount", object).fillna("").astype(str).to_numpy(dtype=object)
    commutation = _col(m, "commutation", object).fillna("").astype(str).to_numpy(dtype=object)
    n_motor = len(m)

    parts = []   # (motor index, kind, gear frame rows)
    if env.direct:
        g = pd.DataFrame({c: np.nan for c in _GEAR}, index=range(n_motor))
        g["ratio"], g["efficiency"], g["inertia"] = 1.0, 1.0, 0.0
        g["motor_ix"], g["gear"], g["kind"] = np.arange(n_motor), "direct", GEAR_DIRECT
        g["suffix"] = ""
        parts.append(g)
    if env.catalogue_gears and len(gearheads):
        gh = gearheads.reset_index(drop=True)
        left = pd.DataFrame({"motor_ix": np.arange(n_motor), "mount": mount})
        right = pd.DataFrame({c: _col(gh, c) for c in _GEAR})
        right["gear"] = gh["id"].astype(str).to_numpy(dtype=object)
        right["price"], right["currency"], right["price_note"] = _prices(gh, env)
        right["mount"] = _col(gh, "mount", object).fillna("").astype(str).to_numpy(dtype=object)
        g = left.merge(right[right["mount"] != ""], on="mount").drop(columns="mount")
        g["inertia"] = g["inertia"].fillna(0.0)
        g["kind"], g["suffix"] = GEAR_CATALOGUE, "+" + g["gear"]
        parts.append(g)
    if env.ratios:
        ratios = np.asarray(env.ratios, dtype=float)
        stages = np.full(len(ratios), env.stages) if env.stages else _stages(ratios)
        labels = np.array([f"ratio-{r:g}" if r != int(r) else f"ratio-{r:.1f}" for r in ratios],
                          dtype=object)
        g = pd.DataFrame({c: np.nan for c in _GEAR}, index=range(n_motor * len(ratios)))
        g["motor_ix"] = np.repeat(np.arange(n_motor), len(ratios))
        g["ratio"] = np.tile(ratios, n_motor)
        g["efficiency"] = np.tile(env.stage_efficiency ** stages, n_motor)
        g["inertia"] = env.gear_inertia
        g["gear"] = np.tile(labels, n_motor)
        g["kind"] = GEAR_ASSUMED
        g["suffix"] = np.tile(np.array(["@" + x for x in labels], dtype=object), n_motor)  # 200 strings shared
        parts.append(g)
    if len(parts) == 1:
        g = parts[0]          # no concatenated copy of a 2M-row frame
    else:
        g = pd.concat(parts, ignore_index=True) if parts else pd.DataFrame(columns=_GEAR + ["motor_ix"])
    ix = g["motor_ix"].to_numpy(dtype=int)
    kind = g["kind"].to_numpy(dtype=int)
    geared = kind == GEAR_CATALOGUE

    def total(name):
        gear_part = np.where(geared, g[name].to_numpy(dtype=float), 0.0)
        return mv[name][ix] + gear_part

    gear_currency = (g["currency"] if "currency" in g else pd.Series([""] * len(g))).fillna("")
    gear_currency = gear_currency.astype(str).to_numpy(dtype=object)
    m_cur = motor_currency[ix]
    mixed = geared & (m_cur != "") & (gear_currency != "") & (m_cur != gear_currency)
    price_note = np.where(mixed, "motor and gearhead priced in different currencies "
                          "(set ranking.currency and exchange_rates)", motor_price_note[ix]).astype(object)
    if "price_note" in g:
        gnote = g["price_note"].fillna("").to_numpy(dtype=object)
        price_note = np.where((price_note == "") & geared, gnote, price_note).astype(object)

    cand = {
        "id": (pd.Series(ids[ix]) + g["suffix"].astype(str).to_numpy()).to_numpy(dtype=object),
        "motor": ids[ix], "gear": g["gear"].to_numpy(dtype=object), "kind": kind,
        "motor_ix": ix, "mount": mount[ix], "commutation": commutation[ix],
        "R": mv["terminal_resistance"][ix], "Kt": mv["torque_constant"][ix],
        "Ke": mv["back_emf_constant"][ix], "Tf": np.nan_to_num(mv["friction_torque"][ix]),
        "J": mv["rotor_inertia"][ix],
        "Rth1": mv["thermal_resistance_winding_housing"][ix],
        "Rth2": mv["thermal_resistance_housing_ambient"][ix],
        "tau_w": mv["thermal_time_constant_winding"][ix], "tau_m": mv["thermal_time_constant_motor"][ix],
        "Tmax": mv["max_winding_temperature"][ix], "Tref": mv["resistance_reference_temperature"][ix],
        "beta": beta[ix], "max_speed": mv["max_speed"][ix],
        "speed_from_no_load": speed_from_no_load[ix],
        "ratio": g["ratio"].to_numpy(dtype=float), "eta": g["efficiency"].to_numpy(dtype=float),
        "Jg": g["inertia"].to_numpy(dtype=float),
        "gear_cont_torque": g["max_continuous_torque"].to_numpy(dtype=float),
        "gear_peak_torque": g["max_intermittent_torque"].to_numpy(dtype=float),
        "gear_max_speed": g["max_input_speed"].to_numpy(dtype=float),
        "mass": total("mass"), "length": total("length"),
        "price": np.where(mixed, np.nan, total("price")),
        "currency": np.where(m_cur != "", m_cur, np.where(geared, gear_currency, "")).astype(object),
        "price_note": price_note,
        "diameter": np.fmax(mv["diameter"][ix], np.where(geared, g["diameter"].to_numpy(dtype=float),
                                                          np.nan)),
    }
    cand["diameter"] = np.where(np.isnan(mv["diameter"][ix]), np.nan, cand["diameter"])
    return cand
