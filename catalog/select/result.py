"""The result of a selection: shortlist, rejected candidates, explanations.

:func:`select` chains envelope → candidates → evaluation → checks → ranking
and returns a :class:`Selection`.  Data frames are in SI (temperatures in K,
speeds in rad/s); the CLI converts for display.
"""
from __future__ import annotations

__all__ = ["Selection", "select", "MARGIN_COLUMNS"]

import difflib

import numpy as np
import pandas as pd

from ..errors import NotFound
from .candidates import GEAR_ASSUMED, GEAR_CATALOGUE, GEAR_DIRECT, build_candidates
from .checks import CHECKS, reason_texts, run_checks
from .envelope import load_envelope
from .evaluate import evaluate, evaluate_all

#: Who makes the parts and their part numbers (to order them); gear columns empty without a catalogue gearhead.
PART_COLUMNS = ["manufacturer", "part_number", "gear_manufacturer", "gear_part_number"]
#: Margin columns of the shortlist (fractions; temperature_margin in K).
MARGIN_COLUMNS = ["voltage_margin", "peak_current_margin", "rms_current_margin", "temperature_margin",
                  "motor_speed_margin", "gear_speed_margin", "gear_peak_torque_margin",
                  "gear_continuous_torque_margin", "smallest_margin"]
_RPM = 30.0 / np.pi
_GEAR_KIND = {GEAR_DIRECT: "direct", GEAR_CATALOGUE: "catalogue", GEAR_ASSUMED: "assumed"}


def _pareto(values: np.ndarray) -> np.ndarray:
    """Non-dominated rows of ``values`` (P, K), smaller is better (chunked broadcast)."""
    v = np.where(np.isnan(values), np.inf, values)
    keep = np.ones(len(v), bool)
    for start in range(0, len(v), 1024):
        block = v[start:start + 1024][:, None, :]          # (B, 1, K)
        le = np.all(v[None, :, :] <= block, axis=2)          # other j at least as good everywhere
        lt = np.any(v[None, :, :] < block, axis=2)
        keep[start:start + 1024] = ~np.any(le & lt, axis=1)
    return keep


class Selection:
    """Candidates of a catalogue evaluated against one envelope.

    Attributes
    ----------
    envelope : Envelope
        The validated envelope (SI).
    table : DataFrame
        Every candidate with every metric, margin, ``passed`` and ``reasons``.
    shortlist : DataFrame
        The passing candidates in ranking order, ``top`` of them.
    rejected : DataFrame
        Every failing candidate with its failed checks and their numbers.
    """

    def __init__(self, envelope, candidates: dict, table: pd.DataFrame, top: int, *, lazy=None):
        self.envelope = envelope
        self._cand = candidates
        self._top = top
        self._lazy = lazy          # (rows of the table -> DataFrame of the text columns), or None
        self._table = table
        self._passing = self._rejected = None
        passed = table["passed"].to_numpy(dtype=bool)
        self._passed = passed
        head = np.flatnonzero(passed)[:top]
        cols = ["rank", "candidate", "motor", "gear", *PART_COLUMNS, "ratio", "worst_segment", *MARGIN_COLUMNS,
                "winding_temperature", "rms_current", "peak_current", "energy_per_cycle", "mass",
                "price", "currency", "pareto", "notes"]
        self.shortlist = self._rows(head)[cols].reset_index(drop=True)

    def _rows(self, rows) -> pd.DataFrame:
        """Table rows at positions ``rows``, with the text columns (built only for them)."""
        part = self._table.iloc[rows]
        if self._lazy is None:
            return part
        part = part.copy()
        for k, v in self._lazy(np.asarray(rows)).items():
            part[k] = v
        return part

    @property
    def table(self) -> pd.DataFrame:
        """Every candidate with every metric, margin, ``passed``, ``failed``, ``reasons`` and ``notes``.

        The text columns are built on first access (every check is decided
        without them; ``reason_counts`` and the shortlist never need them).
        """
        if self._lazy is not None:
            self._table = self._rows(np.arange(len(self._table)))
            self._lazy = None
        return self._table

    @table.setter
    def table(self, value):
        self._table, self._lazy = value, None

    @property
    def passing(self) -> pd.DataFrame:
        """The passing candidates in ranking order."""
        if self._passing is None:
            self._passing = self._rows(np.flatnonzero(self._passed))
        return self._passing

    @property
    def rejected(self) -> pd.DataFrame:
        """Every failing candidate with its failed checks and their numbers (texts built on first access)."""
        if self._rejected is None:
            self._rejected = self._rows(np.flatnonzero(~self._passed))[
                ["candidate", "motor", "gear", *PART_COLUMNS, "ratio", "failed", "reasons"]].reset_index(drop=True)
        return self._rejected

    def __repr__(self) -> str:
        n_pass = int(self._passed.sum())
        return (f"Selection({self.envelope.name!r}: {n_pass} passing, "
                f"{len(self._passed) - n_pass} rejected)")

    def reason_counts(self) -> pd.Series:
        """Number of rejected candidates failing each check, most frequent first."""
        t = self._table
        rej = ~self._passed
        counts = pd.Series([int(np.count_nonzero(t["fails_" + k].to_numpy(dtype=bool) & rej)) for k in CHECKS],
                           dtype=int)
        counts.index = list(CHECKS)
        return counts[counts > 0].sort_values(ascending=False, kind="stable")

    def explain(self, candidate_id: str) -> str:
        """The whole story of one candidate: every segment and every margin, as text."""
        ids = list(self._cand["id"])
        if candidate_id not in ids:
            close = difflib.get_close_matches(candidate_id, ids, n=5, cutoff=0.5)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise NotFound(f"no candidate {candidate_id!r} for this envelope{hint}", suggestions=close)
        i = ids.index(candidate_id)
        one = {k: v[i:i + 1] for k, v in self._cand.items()}
        d = evaluate(self.envelope, one, detail=True)
        pos = np.flatnonzero(self._table["candidate"].to_numpy(dtype=object) == candidate_id)[:1]
        row = self._rows(pos).iloc[0]
        env = self.envelope
        lines = [f"candidate {candidate_id}",
                 f"  motor {row['motor']}; gear {row['gear']} ({_GEAR_KIND[int(one['kind'][0])]}), ratio "
                 f"{row['ratio']:g}, efficiency {one['eta'][0]:.3g}"]
        verdict = (f"passes, rank {int(row['rank'])} of {int(self._passed.sum())}" if row["passed"]
                   else f"rejected: {row['failed']}")
        lines.append(f"  verdict: {verdict}")
        tw = row["winding_temperature"]
        lines.append(f"  winding temperature {tw - 273.15:.1f} °C (ambient {env.ambient_temperature - 273.15:.1f} °C)"
                     if np.isfinite(tw) else f"  winding temperature: {'runaway' if tw == np.inf else 'unknown'}")
        lines.append(f"  supply {env.min_voltage:.1f} V minimum - {env.drive_voltage_drop:.1f} V drive drop "
                     f"= {env.available_voltage:.1f} V at the motor")
        lines.append("  segment            time[s]  load rpm (start..end)  load N·m  motor rpm (start..end)"
                     "  motor N·m  current A  voltage V")
        for s, name in enumerate(env.names):
            dur = f"{env.duration[s]:.3g}" if env.mode == "cycle" else env.continuous[s] and "cont." or "peak"
            lines.append(
                f"  {name[:18]:<18} {dur:>7}  {env.speed_start[s] * _RPM:>9.1f}..{env.speed_end[s] * _RPM:<9.1f}"
                f"  {env.torque[s]:>8.3g}  {d['seg_speed_start'][0, s] * _RPM:>10.0f}..{d['seg_speed_end'][0, s] * _RPM:<10.0f}"
                f"  {d['seg_motor_torque'][0, s]:>9.4g}  {d['seg_current'][0, s]:>9.3g}  {d['seg_voltage'][0, s]:>9.3g}")
        lines.append(f"  RMS current {row['rms_current']:.3g} A, peak {row['peak_current']:.3g} A"
                     + (f", energy per cycle {row['energy_per_cycle']:.4g} J" if env.mode == "cycle" else ""))
        lines.append("  margins (required in brackets):")
        req = env.margins
        need = {"voltage_margin": req["voltage"], "peak_current_margin": req["current"],
                "rms_current_margin": req["current"], "temperature_margin": req["temperature"],
                "motor_speed_margin": req["speed"], "gear_speed_margin": req["speed"],
                "gear_peak_torque_margin": req["torque"], "gear_continuous_torque_margin": req["torque"]}
        for col in MARGIN_COLUMNS:
            value = row[col]
            if col == "temperature_margin":
                text = f"{value:.1f} K [{need[col]:.3g} K]" if np.isfinite(value) else "not known"
            elif np.isnan(value):
                text = "not checked"
            else:
                text = f"{value * 100:.1f} %" + (f" [{need[col] * 100:.3g} %]" if col in need else "")
            lines.append(f"    {col:<32} {text}")
        if row["notes"]:
            lines.append(f"  notes: {row['notes']}")
        if not row["passed"]:
            lines.append("  failed checks:")
            lines += [f"    - {t}" for t in row["reasons"].split("; ")]
        return "\n".join(lines)


def select(motors: pd.DataFrame, gearheads: pd.DataFrame, envelope, top: int | None = None,
           motor_notes: dict | None = None) -> Selection:
    """Evaluate every motor × gear option against a load envelope.

    Parameters
    ----------
    motors, gearheads : DataFrame
        Catalogue frames in SI (``Catalog.motors()``, ``Catalog.gearheads()``).
    envelope : str, Path, dict or Envelope
        The load envelope (TOML path or parsed dict with unit strings).
    top : int, optional
        Length of the shortlist; default the envelope's ``ranking.top``.
    motor_notes : dict, optional
        motor id -> text added to the notes of its candidates (the API passes the
        consistency flags of the datasheet here).

    Returns
    -------
    Selection
    """
    env = load_envelope(envelope)
    cand = build_candidates(motors, gearheads, env)
    if motor_notes:
        cand["motor_note"] = pd.Series(cand["motor"]).map(motor_notes).fillna("").to_numpy(dtype=object)
    keys = [k.lstrip("-") for k in list(env.rank_keys) + list(env.pareto or [])]
    with_energy = "energy_per_cycle" in keys   # otherwise computed for the rows shown only
    res = evaluate_all(env, cand, energy=with_energy) if len(cand["id"]) else {}
    n = len(cand["id"])
    cols = {"candidate": cand["id"], "motor": cand["motor"], "gear": cand["gear"], "ratio": cand["ratio"]}
    if n:
        margins, failed, _, _ = run_checks(env, cand, res, with_texts=False)
        cols.update(margins)
        for k in ("winding_temperature", "rms_current", "peak_current", "energy_per_cycle"):
            cols[k] = res[k]
        for k in ("mass", "price", "length", "diameter"):
            cols[k] = cand[k]
        cols["currency"] = cand["currency"]
        seg_choice = np.argmin(np.vstack([np.nan_to_num(cols[c], nan=np.inf) for c in
                                          ("voltage_margin", "peak_current_margin", "motor_speed_margin")]),
                               axis=0)
        segs = np.vstack([res["voltage_seg"], res["peak_current_seg"], res["speed_seg"]])
        cols["worst_segment"] = np.asarray(env.names, dtype=object)[segs[seg_choice, np.arange(n)]]
        cols["notes"] = np.full(n, None, dtype=object)   # text columns: built by the Selection when asked for
        fails = {"fails_" + k: failed[k].to_numpy() for k in CHECKS}
        cols.update(fails)
        cols["passed"] = ~np.logical_or.reduce(list(fails.values()))
        cols["failed"] = cols["reasons"] = np.full(n, None, dtype=object)
    else:
        for k in CHECKS:
            cols["fails_" + k] = np.zeros(0, bool)
        cols["passed"] = np.zeros(0, bool)
        for k in PART_COLUMNS + ["worst_segment", "currency", "notes", "failed", "reasons"]:
            cols[k] = np.zeros(0, dtype=object)   # an empty catalogue: the same columns, no rows
        for k in MARGIN_COLUMNS + ["winding_temperature", "rms_current", "peak_current", "energy_per_cycle",
                                   "mass", "price", "length", "diameter"]:
            cols[k] = np.zeros(0)
    table = pd.DataFrame(cols, copy=False)   # the arrays are not copied once more
    table, pos = _rank(table, env)
    lazy = None
    if n:
        parts = _part_names(motors, gearheads)

        def lazy(rows):
            at = pos[rows]
            keys, reasons, notes = reason_texts(env, cand, res, at)
            out = {"notes": notes, "failed": keys, "reasons": reasons}
            if not with_energy and len(at):
                sub = {k: (v[at] if isinstance(v, np.ndarray) and v.shape[:1] == (n,) else v)
                       for k, v in cand.items()}
                out["energy_per_cycle"] = evaluate(env, sub)["energy_per_cycle"]
            for (column, source), names in parts.items():
                out[column] = pd.Series(cand[source][at]).map(names).to_numpy(dtype=object)
            return out
    return Selection(env, cand, table, env.top if top is None else int(top), lazy=lazy)


def _part_names(motors, gearheads) -> dict:
    """(column, candidate key) -> {record id: text}: makers and part numbers to order by."""
    out = {}
    for frame, key, prefix in ((motors, "motor", ""), (gearheads, "gear", "gear_")):
        if frame is None or not len(frame) or "id" not in frame:
            frame = pd.DataFrame(columns=["id"])
        ids = frame["id"].astype(str)
        for field in ("manufacturer", "part_number"):
            out[(prefix + field, key)] = dict(zip(ids, frame[field])) if field in frame else {}
    return out


def _rank(table: pd.DataFrame, env) -> tuple:
    """Add ``rank`` (passing candidates in ranking order) and ``pareto`` columns.

    Returns the table in ranking order (passing first, then the rest in
    candidate order) and the candidate position of each of its rows.  Only
    the passing rows are sorted, and the table is reordered by one ``take``.
    ``table`` is changed in place (``select`` owns it).
    """
    n = len(table)
    table["rank"] = np.nan
    table["pareto"] = False
    if "winding_temperature" not in table:
        return table, np.arange(n)
    passed = table["passed"].to_numpy(dtype=bool)
    ix = np.flatnonzero(passed)
    cols = [k.lstrip("-") for k in env.rank_keys]
    ascending = [not k.startswith("-") for k in env.rank_keys]
    keys = table[cols + ["candidate"]].iloc[ix]
    keys.index = ix
    order = keys.sort_values(cols + ["candidate"], ascending=ascending + [True], na_position="last",
                             kind="mergesort").index.to_numpy()
    rank = np.full(n, np.nan)
    rank[order] = np.arange(1, len(order) + 1)
    table["rank"] = rank
    if env.pareto and len(ix):
        sign = np.array([-1.0 if k.startswith("-") else 1.0 for k in env.pareto])
        vals = table[[k.lstrip("-") for k in env.pareto]].to_numpy(dtype=float)[ix] * sign
        pareto = np.zeros(n, bool)
        pareto[ix] = _pareto(vals)
        table["pareto"] = pareto
    pos = np.concatenate([order, np.flatnonzero(~passed)])
    return table.take(pos).reset_index(drop=True), pos
