"""From a selection to the plain inputs of the diagrams.

For a candidate of a :class:`catalog.select.Selection` this rebuilds the
candidate (motor row, gear row, the envelope's cooling factor) with
:func:`catalog.select.candidates.build_candidates` and evaluates it with
:func:`catalog.select.evaluate.at_corners` (``detail=True``), the same
functions the selection ran; the lines are drawn for the motor at the
tolerance corner that limits its voltage.  It returns a
:class:`~catalog.export.plots.MotorModel`, the
:class:`~catalog.export.plots.Conditions` and one
:class:`~catalog.export.plots.OperatingPoint` per envelope segment.
"""
from __future__ import annotations

__all__ = ["CandidateDetail", "candidate_detail", "catalog_of", "catalog_or_none", "records_used", "load_points"]

import math
from dataclasses import dataclass

from ..errors import InputError, NotFound, Problem


@dataclass
class CandidateDetail:
    """Everything the diagram of one candidate needs (SI)."""

    candidate: str
    motor: str
    gear: str
    model: object        # MotorModel
    conditions: object   # Conditions
    points: list         # OperatingPoint per segment
    winding_temperature: float   # as the selection reports it (NaN unknown, inf runaway) [K]


def catalog_or_none(selection, catalog=None):
    """The catalogue a selection came from: ``catalog``, else ``selection.catalog``, else None."""
    return catalog if catalog is not None else getattr(selection, "catalog", None)


def catalog_of(selection, catalog=None):
    """The catalogue a selection came from (see :func:`catalog_or_none`); none → InputError."""
    cat = catalog_or_none(selection, catalog)
    if cat is None:
        msg = "this needs the catalogue the selection came from: pass catalog=catalog.open(path)"
        raise InputError(msg, [Problem("catalog", None, None, msg)])
    return cat


def _rows(cat, view: str, ids):
    ids = [str(i) for i in ids if isinstance(i, str) and i]
    if not ids:
        import pandas as pd

        return pd.DataFrame({"id": []})
    return cat.sql(f"SELECT * FROM {view} WHERE list_contains($ids, id) ORDER BY id", params={"ids": ids})


def records_used(selection, catalog, candidates=None) -> tuple:
    """(motor rows, gearhead rows) of the catalogue behind ``candidates`` (default the shortlist)."""
    short = selection.shortlist if candidates is None else selection.table[
        selection.table["candidate"].isin(list(candidates))]
    cat = catalog_of(selection, catalog)
    motors = _rows(cat, "motors", short["motor"].unique())
    gears = _rows(cat, "gearheads", short["gear"].unique())
    return motors, gears


def candidate_detail(selection, candidate_id: str, catalog=None, motors=None, gearheads=None) -> CandidateDetail:
    """The diagram inputs of one candidate of ``selection``.

    ``motors``/``gearheads`` (catalogue frames holding at least the
    candidate's rows) spare a catalogue read when many candidates are drawn.
    """
    import numpy as np

    from ..select.candidates import GEAR_CATALOGUE, build_candidates
    from ..select.evaluate import FALLBACK_TEMPERATURE, at_corners
    from ..select.registry import corner_scales, checks
    from .lines import Conditions, MotorModel, OperatingPoint

    table = selection.table
    row = table[table["candidate"] == candidate_id]
    if row.empty:
        import difflib

        close = difflib.get_close_matches(candidate_id, table["candidate"].tolist(), n=5, cutoff=0.5)
        hint = f"; did you mean {', '.join(close)}?" if close else ""
        raise NotFound(f"no candidate {candidate_id!r} in this selection{hint}", suggestions=close)
    row = row.iloc[0]
    if motors is None or gearheads is None:
        motors, gearheads = records_used(selection, catalog, [candidate_id])
    env = selection.envelope
    m = motors[motors["id"] == row["motor"]]
    g = gearheads[gearheads["id"] == row["gear"]] if len(gearheads) else gearheads
    if m.empty:
        raise NotFound(f"motor {row['motor']!r} of candidate {candidate_id!r} is no longer in the catalogue")
    cand = build_candidates(m, g, env)
    ids = list(cand["id"])
    if candidate_id not in ids:
        raise NotFound(f"candidate {candidate_id!r} cannot be rebuilt from the catalogue "
                       "(the catalogue changed since the selection?)")
    i = ids.index(candidate_id)
    one = {k: v[i:i + 1] for k, v in cand.items()}
    d = at_corners(env, one, detail=True)
    c = {k: (v[0] if hasattr(v, "__len__") and not isinstance(v, str) else v) for k, v in one.items()}
    # the lines are drawn for the motor at the tolerance corner that limits its voltage
    voltage = next(ch for ch in checks() if ch.key == "voltage")
    k_scale, r_scale = corner_scales(env, voltage.corners[int(d["corner_voltage"][0])])
    c.update(terminal_resistance=c["terminal_resistance"] * r_scale, torque_constant=c["torque_constant"] * k_scale,
             back_emf_constant=c["back_emf_constant"] * k_scale)
    geared = int(c["kind"]) == GEAR_CATALOGUE
    model = MotorModel(
        label=candidate_id, terminal_resistance=float(c["terminal_resistance"]), torque_constant=float(c["torque_constant"]),
        back_emf_constant=float(c["back_emf_constant"]), friction_torque=float(c["friction_torque"]), reference_temperature=float(c["resistance_reference_temperature"]),
        magnet_coefficient=float(c["magnet_coefficient"]), max_winding_temperature=float(c["max_winding_temperature"]),
        thermal_resistance_winding_housing=float(c["thermal_resistance_winding_housing"]), thermal_resistance_housing_ambient=float(c["thermal_resistance_housing_ambient"]),
        max_speed=float(c["max_speed"]), ratio=float(c["ratio"]), efficiency=float(c["efficiency"]),
        gear_max_speed=float(c["gear_max_input_speed"]) if geared else math.nan,
        gear_label=str(c["gear"]))
    tw = float(d["voltage_temperature"][0])     # the hot temperature of that corner's voltage check
    tw_eval = tw if math.isfinite(tw) else (model.max_winding_temperature
                                             if math.isfinite(model.max_winding_temperature)
                                             else FALLBACK_TEMPERATURE)
    cond = Conditions(voltage=env.available_voltage, nominal_voltage=env.nominal_voltage - env.drive_voltage_drop,
                      ambient_temperature=env.ambient_temperature, winding_temperature=tw_eval,
                      peak_current=env.drive_peak_current, continuous_current=env.drive_continuous_current)
    points = []
    for s, name in enumerate(env.names):
        if env.mode == "cycle":
            kind, dur = "segment", float(env.duration[s])
        else:
            kind, dur = ("continuous" if bool(env.continuous[s]) else "peak"), math.nan
        w0, w1 = float(d["seg_speed_start"][0, s]), float(d["seg_speed_end"][0, s])
        points.append(OperatingPoint(str(name), float(d["seg_motor_torque"][0, s]), w0,
                                     None if w1 == w0 else w1, dur, kind))
    return CandidateDetail(candidate_id, str(row["motor"]), str(row["gear"]), model, cond, points,
                           float(np.asarray(row["winding_temperature"], dtype=float)))


def load_points(envelope) -> list:
    """The envelope's segments at the gear output (SI): load torque plus load-inertia torque."""
    from .lines import OperatingPoint

    env = envelope
    out = []
    for s, name in enumerate(env.names):
        w0, w1 = float(env.speed_start[s]), float(env.speed_end[s])
        alpha = (w1 - w0) / float(env.duration[s]) if env.mode == "cycle" else 0.0
        torque = float(env.torque[s]) + env.load_inertia * alpha
        kind = "segment" if env.mode == "cycle" else ("continuous" if bool(env.continuous[s]) else "peak")
        dur = float(env.duration[s]) if env.mode == "cycle" else math.nan
        out.append(OperatingPoint(str(name), torque, w0, None if w1 == w0 else w1, dur, kind))
    return out
