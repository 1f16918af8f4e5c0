"""The result of a selection: shortlist, rejected candidates, explanations.

:func:`select` chains envelope → candidates → evaluation → checks → ranking
and returns a :class:`Selection`.  Data frames are in SI (temperatures in K,
speeds in rad/s); the CLI converts for display.
"""
from __future__ import annotations

__all__ = ["Selection", "select", "shortlist_columns", "PART_COLUMNS", "METRIC_COLUMNS"]

import difflib

import numpy as np
import pandas as pd

from ..errors import NotFound
from .candidates import GEAR_ASSUMED, GEAR_CATALOGUE, GEAR_DIRECT, build_candidates
from .checks import check_keys, estimate_flags, reason_texts
from .registry import CHECKS, checks, margin_columns, value_columns
from .envelope import load_envelope
from .evaluate import EVAL_KEYS, at_corners, checked_in_chunks, evaluate_all

#: Who makes the parts and their part numbers (to order them); gear columns empty without a catalogue gearhead.
PART_COLUMNS = ["manufacturer", "part_number", "gear_manufacturer", "gear_part_number"]
#: What the evaluation says of every candidate besides its margins (SI).
METRIC_COLUMNS = ["winding_temperature", "rms_current", "peak_current", "energy_per_cycle"]
#: Totals of motor and gear option (SI) and the price's currency.
TOTAL_COLUMNS = ["mass", "price", "currency", "length", "diameter"]


def shortlist_columns() -> list:
    """The shortlist's columns, the margins and check values generated from the check registry."""
    return ["rank", "candidate", "motor", "gear", *PART_COLUMNS, "ratio", "worst_segment", *margin_columns(),
            *value_columns(), *METRIC_COLUMNS, "mass", "price", "currency", "estimates", "pareto", "notes"]


def table_columns() -> list:
    """Every column of a selection's table (the shortlist's, sizes, verdict and texts)."""
    out = shortlist_columns() + ["length", "diameter", "failed", "reasons"]
    return list(dict.fromkeys(out))
_RPM = 30.0 / np.pi
_GEAR_KIND = {GEAR_DIRECT: "direct", GEAR_CATALOGUE: "catalogue", GEAR_ASSUMED: "assumed"}


def _pareto(values: np.ndarray) -> np.ndarray:
    """Non-dominated rows of ``values`` (P, K), smaller is better, K at most 3; NaN counts as worst.

    A row dominates another if it is no worse in every key and better in one; only a row
    before it in lexicographic order can dominate a row.  Equal rows share their verdict, so
    the distinct rows are swept in that order: with one key only the first is kept; with two,
    a row is dominated if an earlier row has a second key no larger; with three, if an earlier
    row is no larger in the last two keys (a staircase of the earlier rows' minima, searched
    block by block, plus the pairs inside each block).  Memory is bounded by the block, time
    grows as P log P (the former pairwise comparison of every row with every row did not
    finish on a million passing candidates).
    """
    v = np.where(np.isnan(values), np.inf, np.asarray(values, dtype=float))
    n, k = v.shape
    if n == 0:
        return np.zeros(0, bool)
    order = np.lexsort(v.T[::-1])                       # lexicographic order of the rows
    ordered = v[order]
    first = np.r_[True, np.any(ordered[1:] != ordered[:-1], axis=1)]
    rows = ordered[first]                                 # the distinct rows, in that order
    inverse = np.empty(n, dtype=np.intp)
    inverse[order] = np.cumsum(first) - 1
    m = len(rows)
    dominated = np.zeros(m, bool)
    if k == 1:
        dominated[1:] = True
    elif k == 2:
        earlier = np.minimum.accumulate(rows[:, 1])
        dominated[1:] = earlier[:-1] <= rows[1:, 1]
    elif k == 3:
        stair1 = np.zeros(0)   # the earlier rows' (key 1, key 2) minima: key 1 rising, key 2 falling
        stair2 = np.zeros(0)
        block = 256
        for lo in range(0, m, block):
            b = rows[lo:lo + block]
            at = np.searchsorted(stair1, b[:, 1], side="right") - 1
            hit = at >= 0
            dominated[lo:lo + len(b)][hit] = stair2[at[hit]] <= b[hit, 2]
            inside = (b[None, :, 1] <= b[:, None, 1]) & (b[None, :, 2] <= b[:, None, 2])   # [i, j]: j no worse
            inside &= np.tri(len(b), k=-1, dtype=bool)                                       # j before i
            dominated[lo:lo + len(b)] |= inside.any(axis=1)
            k1 = np.concatenate([stair1, b[:, 1]])
            k2 = np.concatenate([stair2, b[:, 2]])
            order = np.lexsort((k2, k1))
            k1, k2 = k1[order], k2[order]
            keep = np.r_[True, k2[1:] < np.minimum.accumulate(k2)[:-1]]
            stair1, stair2 = k1[keep], k2[keep]
    else:
        raise ValueError("at most three Pareto keys")
    return ~dominated[inverse]


class Selection:
    """Candidates of a catalogue evaluated against one envelope.

    Attributes
    ----------
    envelope : Envelope
        The validated envelope (SI).
    candidates : Candidates
        Every candidate (motor and gear option) the selection evaluated.
    catalog : Catalog or None
        The catalogue the selection came from (exports read provenance there).
    stock_mode : str
        How the shelf was taken into account: ``ignore``, ``prefer`` or ``only``.
    table : DataFrame
        Every candidate with every metric, margin, ``passed`` and ``reasons``,
        passing candidates first in ranking order (built on first access).
    shortlist : DataFrame
        The passing candidates in ranking order, ``top`` of them.
    rejected : DataFrame
        Every failing candidate with its failed checks and their numbers.

    A selection keeps only the verdicts of every candidate (``passed`` and
    one ``fails_<check>`` column per check); the rows somebody reads are
    evaluated again (the same arithmetic) and become a DataFrame with every
    number and text (ids, reasons, notes).  ``extra_columns`` of a given
    ``table`` (the shelf's) are kept in the shortlist.
    """

    def __init__(self, envelope, candidates, table, top: int, *, lazy=None, order=None, catalog=None,
                 stock_mode: str = "ignore", extra_columns=()):
        self.envelope = envelope
        self.candidates = candidates
        self.catalog = catalog
        self.stock_mode = stock_mode
        self._top = top
        self._lazy = lazy          # (candidate positions -> {column: values}) for the text columns, or None
        if isinstance(table, pd.DataFrame):
            table = {k: table[k].to_numpy() for k in table.columns}
        self._cols = table         # column -> array, in candidate order when ``lazy`` is set
        n = len(table["passed"])
        # rows in display order (passing by rank, then the rest); None: the columns' own order
        self._order = np.arange(n) if order is None else np.asarray(order)
        self._passing = self._rejected = self._table = self._rejected_columns = None
        self._passed = np.asarray(table["passed"], dtype=bool)
        self._n_pass = int(self._passed.sum())
        shown = self._order[self._passed[self._order]]
        self.shortlist = self._rows(shown[:top], shortlist_columns() + list(extra_columns))

    def _rows(self, rows, columns=None) -> pd.DataFrame:
        """The rows at positions ``rows`` as a DataFrame, with the text columns (built only for them);
        ``columns``: only these, in this order."""
        return pd.DataFrame(self._arrays(rows, columns))

    def _arrays(self, rows, columns=None) -> dict:
        """:meth:`_rows` as column -> array (texts as object arrays), before any DataFrame is made."""
        rows = np.asarray(rows, dtype=np.intp)
        data = {k: np.asarray(v)[rows] for k, v in self._cols.items()}
        if self._lazy is not None:
            data.update(self._lazy(rows, columns))
        return data if columns is None else {k: data[k] for k in columns}

    @property
    def table(self) -> pd.DataFrame:
        """Every candidate with every metric, margin, ``passed``, ``failed``, ``reasons`` and ``notes``,
        passing candidates first in ranking order.

        The text columns are built on first access (every check is decided
        without them; ``reason_counts`` and the shortlist never need them).
        """
        if self._table is None:
            self._table = self._rows(self._order)
        return self._table

    @property
    def passing(self) -> pd.DataFrame:
        """The passing candidates in ranking order."""
        if self._passing is None:
            self._passing = self._rows(self._order[:self._n_pass])
        return self._passing

    @property
    def rejected(self) -> pd.DataFrame:
        """Every failing candidate with its failed checks and their numbers (texts built on first access)."""
        if self._rejected is None:
            self._rejected = pd.DataFrame(self.rejected_columns())
        return self._rejected

    def rejected_columns(self) -> dict:
        """The columns of :attr:`rejected` as numpy arrays (the texts as object arrays of str, NaN where a
        maker or part number is missing), built once: an export that only reads the values spares
        the DataFrame (and the conversion of every text to and from pandas' string type).  The arrays
        are the selection's own: read them, do not change them."""
        if self._rejected_columns is None:
            failing = self._order[~self._passed[self._order]]
            self._rejected_columns = self._arrays(failing, ["candidate", "motor", "gear", *PART_COLUMNS, "ratio",
                                                            "failed", "reasons"])
        return dict(self._rejected_columns)

    @property
    def counts(self) -> tuple[int, int]:
        """(passing, rejected) candidates, without building any row."""
        return self._n_pass, len(self._passed) - self._n_pass

    def __repr__(self) -> str:
        return (f"Selection({self.envelope.name!r}: {self._n_pass} passing, "
                f"{len(self._passed) - self._n_pass} rejected)")

    #: closest misses asked for (``select(..., misses=N)``); None: listed only when nothing passes
    misses_wanted: int | None = None

    def misses(self, n: int | None = None) -> pd.DataFrame:
        """The ``n`` rejected candidates that fail by the least, with what would make them pass.

        ``n`` defaults to the number asked for when selecting, else
        :data:`catalog.select.misses.DEFAULT_MISSES`.  Columns
        :data:`catalog.select.misses.MISS_COLUMNS` (SI): the summed normalised
        ``shortfall`` over the failed checks, the supply voltage, drive
        currents and ratio that would do, the temperature margin missing, and
        ``suggestions`` as one text (see :mod:`catalog.select.misses`).
        """
        from .misses import DEFAULT_MISSES, check_miss_count, closest_misses

        n = check_miss_count(n if n is not None else (self.misses_wanted or DEFAULT_MISSES))
        cache = self.__dict__.setdefault("_misses", {})
        if n not in cache:
            cache[n] = closest_misses(self, n)
        return cache[n]

    @property
    def shows_misses(self) -> bool:
        """Whether the closest misses belong to what is shown and exported: asked for, or nothing passes."""
        return bool(self.misses_wanted) or (self._n_pass == 0 and len(self._passed) > 0)

    def reason_counts(self) -> pd.Series:
        """Number of rejected candidates failing each check, most frequent first."""
        rej = ~self._passed
        keys = list(CHECKS)
        counts = np.array([np.count_nonzero(np.asarray(self._cols["fails_" + k], dtype=bool) & rej) for k in keys],
                          dtype=int)
        kept = np.flatnonzero(counts > 0)
        kept = kept[np.argsort(-counts[kept], kind="stable")]     # most frequent first, ties in registry order
        return pd.Series(counts[kept], index=[keys[i] for i in kept], dtype=int)

    def explain(self, candidate_id: str) -> str:
        """The whole story of one candidate: every segment and every margin, as text."""
        i = self.candidates.find(candidate_id)
        if i is None:
            motor_ids = [str(m) for m in self.candidates.motors["id"]]
            near = difflib.get_close_matches(candidate_id, motor_ids, n=3, cutoff=0.5)
            near_rows = np.flatnonzero(np.isin(self.candidates.motor_ix, [motor_ids.index(m) for m in near]))
            ids = list(self.candidates.ids(near_rows))
            close = difflib.get_close_matches(candidate_id, ids, n=5, cutoff=0.5)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise NotFound(f"no candidate {candidate_id!r} for this envelope{hint}", suggestions=close)
        one = self.candidates.take(slice(i, i + 1))
        d = at_corners(self.envelope, one, detail=True)
        if self._lazy is None and "candidate" in self._cols:   # columns given in their own order
            pos = np.flatnonzero(np.asarray(self._cols["candidate"], dtype=object) == candidate_id)[:1]
        else:
            pos = np.array([i])   # the columns are in candidate order
        row = self._rows(pos).iloc[0]
        env = self.envelope
        lines = [f"candidate {candidate_id}",
                 f"  motor {row['motor']}; gear {row['gear']} ({_GEAR_KIND[int(one['kind'][0])]}), ratio "
                 f"{row['ratio']:g}, efficiency {one['efficiency'][0]:.3g}"]
        verdict = (f"passes, rank {int(row['rank'])} of {self._n_pass}" if row["passed"]
                   else f"rejected: {row['failed']}")
        lines.append(f"  verdict: {verdict}")
        tw = row["winding_temperature"]
        lines.append(f"  winding temperature {tw - 273.15:.1f} °C (ambient {env.ambient_temperature - 273.15:.1f} °C)"
                     if np.isfinite(tw) else f"  winding temperature: {'runaway' if tw == np.inf else 'unknown'}")
        lines.append(f"  supply {env.min_voltage:.1f} V minimum - {env.drive_voltage_drop:.1f} V drive drop "
                     f"= {env.available_voltage:.1f} V at the motor")
        lines += _corner_lines(env, d)
        if env.mechanism is not None:
            lines.append(f"  mechanism {env.mechanism.describe()}; load inertia at the gear output "
                         f"{env.output_inertia:.4g} kg·m² (in the load torques)")
        width = max([len("segment"), *(len(str(n)) for n in env.names)])   # whole names, however long
        lines.append(f"  {'segment':<{width}} time[s]  load rpm (start..end)  load N·m  motor rpm (start..end)"
                     "  motor N·m  current A  voltage V")
        sources = env.segment_source or [None] * len(env.names)
        for s, name in enumerate(env.names):
            dur = f"{env.duration[s]:.3g}" if env.mode == "cycle" else env.continuous[s] and "cont." or "peak"
            lines.append(
                f"  {name:<{width}} {dur:>7}  {env.speed_start[s] * _RPM:>9.1f}..{env.speed_end[s] * _RPM:<9.1f}"
                f"  {env.torque[s]:>8.3g}  {d['seg_speed_start'][0, s] * _RPM:>10.0f}..{d['seg_speed_end'][0, s] * _RPM:<10.0f}"
                f"  {d['seg_motor_torque'][0, s]:>9.4g}  {d['seg_current'][0, s]:>9.3g}  {d['seg_voltage'][0, s]:>9.3g}")
            if sources[s] is not None and sources[s].mechanism is not None:   # made from a move or at the mechanism
                lines.append(f"  {'':<{width}}   from {sources[s]}")
        lines.append(f"  RMS current {row['rms_current']:.3g} A, peak {row['peak_current']:.3g} A"
                     + (f", energy per cycle {row['energy_per_cycle']:.4g} J" if env.mode == "cycle" else ""))
        lines.append("  margins (required in brackets):")
        for check in checks():
            margin = check.margin
            if margin is None:
                continue
            value = row[margin.column]
            need = env.margins.get(margin.required, 0.0) if margin.required else None
            if not margin.is_fraction:
                text = f"{value:.1f} K" + (f" [{need:.3g} K]" if need is not None else "") \
                    if np.isfinite(value) else "not known"
            elif np.isnan(value):
                text = "not checked"
            else:
                text = f"{value * 100:.1f} %" + (f" [{need * 100:.3g} %]" if need is not None else "")
            lines.append(f"    {margin.column:<32} {text}")
        smallest = row["smallest_margin"]
        lines.append(f"    {'smallest_margin':<32} " + (f"{smallest * 100:.1f} %" if np.isfinite(smallest)
                                                            else "not checked"))
        for check in checks():
            for name in check.columns:
                lines.append(f"    {name:<32} {row[name]:.4g}")
        if row.get("estimates"):
            lines.append(f"  estimated (gearing.assumed): {row['estimates']} of the assumed gear")
        if row["notes"]:
            lines.append(f"  notes: {row['notes']}")
        if not row["passed"]:
            lines.append("  failed checks:")
            lines += [f"    - {t}" for t in row["reasons"].split("; ")]
        return "\n".join(lines)


def _corner_lines(env, d: dict) -> list:
    """``  tolerance corner: ...`` lines of ``--explain``: at which end of the tolerance band each check
    that reads the motor constants was judged (none without a tolerance)."""
    from .registry import corner_label

    if all(v == (0.0, 0.0) for v in env.tolerance.values()):
        return []
    groups: dict = {}
    for check in checks():
        if not check.corners or not check.applies(env):
            continue
        pick = d.get("corner_" + check.key)
        corner = check.corners[int(pick[0])] if pick is not None and len(check.corners) > 1 else check.corners[0]
        groups.setdefault(corner_label(env, corner), []).append(check.key)
    return [f"  tolerance corner {label}: {', '.join(keys)}" for label, keys in groups.items()]


#: A selection asked to read every row (``select(..., every_row=True)``) evaluates them all at once up to
#: this many candidates (about 60 numbers each, 25 MB, are kept with it); beyond, it decides the verdicts
#: first as always.
EVERY_ROW_MAX = 50_000


def select(motors: pd.DataFrame, gearheads: pd.DataFrame, envelope, top: int | None = None,
           motor_notes: dict | None = None, catalog=None, misses: int | None = None,
           every_row: bool = False) -> Selection:
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
    catalog : Catalog, optional
        The catalogue the frames came from, kept as ``Selection.catalog``.
    misses : int, optional
        Also list this many closest misses (``Selection.misses()``); without it
        they are listed only when nothing passes.
    every_row : bool
        The caller will read every candidate (an export with the rejected
        candidates, the whole ``table``): with at most :data:`EVERY_ROW_MAX`
        candidates, every row is evaluated in full once, now, and the rows
        read later are taken from it, instead of deciding the verdicts first
        (the temperature brackets) and evaluating the rows read again.  The
        same function gives the same numbers and verdicts either way.

    Returns
    -------
    Selection
    """
    env = load_envelope(envelope)
    if misses is not None:
        from .misses import check_miss_count

        misses = check_miss_count(misses)
    cand = build_candidates(motors, gearheads, env)
    if motor_notes:
        cand.set_motor_notes(motor_notes)
    keys = [k.lstrip("-") for k in list(env.rank_keys) + list(env.pareto or [])]
    with_energy = "energy_per_cycle" in keys   # otherwise computed for the rows shown only
    n = cand.size
    rank_cols = [k.lstrip("-") for k in list(env.rank_keys) + list(env.pareto or [])]
    from_cand = {"mass", "price", "length", "diameter", "ratio"}
    eval_keys = tuple(dict.fromkeys(EVAL_KEYS + check_keys(env)))
    whole = bool(every_row) and 0 < n <= EVERY_ROW_MAX   # every row evaluated once, in full
    if whole:
        res = checked_in_chunks(env, cand.take(slice(None), eval_keys))
    else:
        res = evaluate_all(env, cand, energy=with_energy, keep=[k for k in rank_cols if k not in from_cand]) if n else {}
    table = {"passed": res["passed"] if n else np.zeros(0, bool)}
    for k in CHECKS:
        table["fails_" + k] = res["fails_" + k] if n else np.zeros(0, bool)

    def fetch(col, rows):
        """A ranking column at candidate rows (from the evaluation, else from the candidates)."""
        return res[col][rows] if col in res else cand.take(rows, (col,))[col]

    order, rank, pareto = _rank(table["passed"], env, fetch)
    lazy = None
    if n:
        parts = _part_names(motors, gearheads, cand)

        def lazy(at, columns=None):
            """Every column of the candidates at positions ``at``: the evaluation and checks run again on
            these rows (the same arithmetic as for the verdicts; taken from the whole evaluation when
            there is one), then their texts (those of ``columns`` only, when given)."""
            c = cand.take(at)
            r = {k: v[at] for k, v in res.items()} if whole else checked_in_chunks(env, {k: c[k] for k in eval_keys})
            want = (lambda k: True) if columns is None else set(columns).__contains__
            with np.errstate(all="ignore"):   # extreme values overflow to inf in the texts' numbers
                failed, reasons, notes = reason_texts(env, c, r, texts=want("failed") or want("reasons"),
                                                      notes=want("notes"))
            out = {"rank": rank[at], "candidate": c["id"], "motor": c["motor"], "gear": c["gear"], "ratio": c["ratio"]}
            for (column, source), by_row in parts.items():   # per motor or gear-option row, then per candidate
                out[column] = by_row[cand.motor_ix[at] if source == "motor" else cand.option_ix[at]]
            out["worst_segment"] = np.asarray(env.names, dtype=object)[r["worst_seg"]] if len(at) else []
            for k in margin_columns() + list(value_columns()) + METRIC_COLUMNS:
                out[k] = r[k]
            for k in TOTAL_COLUMNS:
                out[k] = c[k]
            out["estimates"] = estimate_flags(env, c["kind"])   # totals holding gearing.assumed estimates
            out.update({"pareto": pareto[at], "notes": notes, "failed": failed, "reasons": reasons})
            return out
    else:
        for k in table_columns():
            table[k] = np.zeros(0, dtype=object)   # an empty catalogue: the same columns, no rows
    sel = Selection(env, cand, table, env.top if top is None else int(top), lazy=lazy, order=order,
                    catalog=catalog)
    sel.misses_wanted = misses
    return sel


def _part_names(motors, gearheads, cand) -> dict:
    """(column, candidate key) -> object array of makers or part numbers to order by, one per motor row
    (key ``motor``) or gear-option row (key ``gear``) of ``cand``; NaN where the option is no gearhead."""
    out = {}
    for frame, key, prefix, ids in ((motors, "motor", "", cand.motors["id"]),
                                    (gearheads, "gear", "gear_", cand.options["label"])):
        if frame is None or not len(frame) or "id" not in frame:
            frame = pd.DataFrame(columns=["id"])
        at = _positions(frame["id"].astype(str).to_numpy(dtype=object), np.asarray(ids, dtype=object))
        for field in ("manufacturer", "part_number"):
            values = frame[field].to_numpy(dtype=object) if field in frame else np.zeros(0, dtype=object)
            found = (at >= 0) & (at < len(values))
            by_row = np.full(len(at), np.nan, dtype=object)
            by_row[found] = values[at[found]]
            out[(prefix + field, key)] = by_row
    return out


def _positions(frame_ids: np.ndarray, ids: np.ndarray) -> np.ndarray:
    """Row of ``frame_ids`` holding each of ``ids`` (−1: none; an id given twice: its last row, as a dict
    would); the candidates' motors are the frame's rows in order, found without an index."""
    if len(frame_ids) == len(ids) and np.array_equal(frame_ids, ids) and pd.Index(frame_ids).is_unique:
        return np.arange(len(ids))
    index = pd.Index(frame_ids)
    last = ~index.duplicated(keep="last")
    at = index[last].get_indexer(pd.Index(ids))
    return np.where(at >= 0, np.flatnonzero(last)[np.maximum(at, 0)] if last.any() else -1, -1)


def _rank(passed: np.ndarray, env, fetch) -> tuple:
    """(rows in display order, rank per candidate, Pareto flag per candidate).

    Display order: passing candidates by the envelope's ranking keys (ties in
    candidate order), then the rest in candidate order.  Only the passing rows
    are read (``fetch(column, rows)``) and sorted.
    """
    passed = np.asarray(passed, dtype=bool)
    n = len(passed)
    rank = np.full(n, np.nan)
    pareto = np.zeros(n, bool)
    ix = np.flatnonzero(passed)
    cols = [k.lstrip("-") for k in env.rank_keys]
    ascending = [not k.startswith("-") for k in env.rank_keys]
    values = {c: np.asarray(fetch(c, ix), dtype=float) for c in dict.fromkeys(cols)}
    keys = [np.where(np.isnan(values[c]), np.inf, values[c] if up else -values[c])   # missing values last
            for c, up in zip(cols, ascending)]
    order = ix[np.lexsort(keys[::-1])] if keys else ix     # stable: ties stay in candidate order
    rank[order] = np.arange(1, len(order) + 1)
    if env.pareto and len(ix):
        sign = np.array([-1.0 if k.startswith("-") else 1.0 for k in env.pareto])
        vals = np.column_stack([np.asarray(fetch(k.lstrip("-"), ix), dtype=float) for k in env.pareto]) * sign
        pareto[ix] = _pareto(vals)
    return np.concatenate([order, np.flatnonzero(~passed)]), rank, pareto
