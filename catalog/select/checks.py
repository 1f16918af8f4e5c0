"""Running the checks of :mod:`catalog.select.registry`: margins, verdicts, reason texts.

Every registered check gives a margin per candidate (``*_margin`` columns)
and a failure mask; a candidate passes when no check fails.  Reason texts are
built only for the rows asked for, and each check's text only for the rows it
fails: the check's ``reason`` runs once on those rows (a view of the candidate
and result columns at them), as whole-column operations on numpy object
arrays (no loop per candidate; a pandas operation per column would cost more
than the text itself on a few hundred rows).
"""
from __future__ import annotations

__all__ = ["CHECKS", "run_checks", "reason_texts", "check_keys", "assumed_gear_note", "estimate_flags"]

from collections.abc import Mapping

import numpy as np
import pandas as pd

from .candidates import GEAR_ASSUMED
from .registry import CHECKS, REGISTRY, CheckInputs, below_required


def run_checks(env, c, r: dict, with_texts: bool = True):
    """Margins, failures and reason texts of every registered check.

    Returns
    -------
    margins : dict
        margin column (and extra value column) → array (N,) (fractions,
        temperature in K), plus ``smallest_margin``.
    failed : dict
        check key → boolean array (N,), in registry order.
    texts : dict or None
        check key → (N,) object array of reason texts (empty where the check passed); None
        without ``with_texts`` (the verdicts never depend on the texts, so
        :func:`reason_texts` builds them later for the rows asked for).
    notes : ndarray or None
        The notes of every candidate, (N,) object array (with ``with_texts``).
    """
    n = _size(c)
    x = CheckInputs(env, c, r, n)
    fails, texts, margins = {}, {}, {}
    smallest = np.full(n, np.nan)
    for check in REGISTRY:
        x.check = check
        if not check.applies(env):
            fails[check.key] = np.zeros(n, bool)
            if with_texts:
                texts[check.key] = np.full(n, "", dtype=object)
            continue
        m = np.asarray(check.compute(x), dtype=float) if check.compute is not None else None
        if check.margin is not None:
            margins[check.margin.column] = m
            part = check.normalise(x, m) if check.normalise is not None else (m if check.margin.is_fraction else None)
            if part is not None:
                smallest = np.fmin(smallest, part)        # NaN (not checked) never wins
        for name, (fn, _) in check.columns.items():
            margins[name] = np.asarray(fn(x))
        fail = np.asarray((check.fails or below_required)(x, m), dtype=bool)
        fails[check.key] = np.broadcast_to(fail, (n,)).copy() if fail.shape != (n,) else fail
        if with_texts:   # built for the failing rows only
            texts[check.key] = _reason_column(env, c, r, n, check, m, fails[check.key])
    margins["smallest_margin"] = smallest
    return margins, fails, (texts if with_texts else None), (_notes(c, env) if with_texts else None)


class _RowView(Mapping):
    """The columns of ``base`` (candidate or result columns of ``n`` rows) at the positions ``rows``,
    each cut on first use; values that are not per-row arrays (scalars, settings) pass unchanged."""

    def __init__(self, base, rows: np.ndarray, n: int):
        self._base, self._rows, self._n = base, rows, n
        self._cut: dict = {}

    def __getitem__(self, key):
        if key not in self._cut:
            v = self._base[key]
            if isinstance(v, pd.Series):
                v = v.iloc[self._rows].reset_index(drop=True)
            elif isinstance(v, np.ndarray) and v.ndim and len(v) == self._n:
                v = v[self._rows]
            self._cut[key] = v
        return self._cut[key]

    def __iter__(self):
        return iter(self._base)

    def __len__(self) -> int:
        return len(self._base)


def _reason_column(env, c, r: dict, n: int, check, margin, failed: np.ndarray) -> np.ndarray:
    """The reason texts of ``check`` (N,) object array: its ``reason`` run on the failing rows only
    (texts are row-wise, so the same as on the whole table), empty elsewhere."""
    out = np.full(n, "", dtype=object)
    rows = np.flatnonzero(failed)
    if not rows.size:
        return out
    x = CheckInputs(env, _RowView(c, rows, n), _RowView(r, rows, n), rows.size)
    x.check = check
    m = margin if margin is None or np.ndim(margin) == 0 else np.asarray(margin)[rows]
    out[rows] = _text_array(check.reason(x, m), rows.size)
    return out


def _text_array(text, n: int) -> np.ndarray:
    """A reason's result (one text, a Series, an array or a list) as an (n,) object array of str;
    None and NaN become empty texts."""
    if isinstance(text, str):
        return np.full(n, text, dtype=object)
    values = text.to_numpy(dtype=object) if isinstance(text, pd.Series) else np.asarray(text, dtype=object)
    values = np.broadcast_to(values, (n,)).copy() if values.shape != (n,) else values
    odd = np.fromiter((type(v) is not str for v in values), dtype=bool, count=n)
    if odd.any():
        values = values.copy()
        values[odd] = ["" if v is None or (isinstance(v, float) and v != v) else str(v) for v in values[odd]]
    return values


def check_keys(env) -> tuple:
    """The candidate columns the checks active for ``env`` read."""
    keys = ["kind"]
    for check in REGISTRY:
        if check.applies(env):
            keys += [k for k in check.needs if k not in keys]
    return tuple(keys)


def reason_texts(env, c: dict, r: dict, rows=None, texts: bool = True, notes: bool = True) -> tuple:
    """(failed keys, reasons, notes) as object arrays, for the candidate positions ``rows`` of ``c``
    and ``r`` (or for all of them when ``c`` and ``r`` already hold just the rows wanted); None for
    the parts not asked for (``texts``: the failed keys and reasons, ``notes``).

    The checks are row-wise, so running them on the rows asked for gives the
    same texts as on the whole table, at the cost of those rows only.  Where
    ``r`` holds the verdicts and margins of :func:`catalog.select.evaluate.checked`
    (``fails_<check>``, the margin columns), they are taken as they are
    instead of being computed again.
    """
    if rows is None:
        sub, res = c, r
    else:
        rows = np.asarray(rows, dtype=int)
        n = _size(c)
        take = (lambda d: {k: (v[rows] if isinstance(v, np.ndarray) and v.ndim and len(v) == n else v)
                           for k, v in d.items()})
        sub, res = (c.take(rows) if hasattr(c, "take") else take(c)), take(r)
    n = _size(sub)
    keys = reasons = None
    if texts:
        if all("fails_" + ch.key in res and (ch.margin is None or ch.margin.column in res) for ch in REGISTRY):
            failed, text = {}, {}
            x = CheckInputs(env, sub, res, n)
            for check in REGISTRY:
                failed[check.key] = np.asarray(res["fails_" + check.key], dtype=bool)
                if not failed[check.key].any():
                    continue
                x.check = check
                m = (np.asarray(res[check.margin.column], dtype=float) if check.margin is not None else
                     np.asarray(check.compute(x), dtype=float) if check.compute is not None else None)
                text[check.key] = _reason_column(env, sub, res, n, check, m, failed[check.key])
        else:
            _, failed, text, _ = run_checks(env, sub, res)
        keys = _join({k: np.where(failed[k], k, "").astype(object) for k in failed if failed[k].any()}, ", ", n)
        reasons = _join(text, "; ", n)
    return keys, reasons, (_notes(sub, env) if notes else None)


def _join(columns: dict, sep: str, n: int) -> np.ndarray:
    """Row-wise join of the non-empty texts of several (n,) object columns of str, column by column (no row loop)."""
    out = np.full(n, "", dtype=object)
    for v in columns.values():
        has = v != ""
        if not has.any():
            continue
        out = np.where(has, out + np.where((out != "") & has, sep, "") + v, out)
    return out


def _size(c) -> int:
    """Number of candidates of a :class:`~catalog.select.candidates.Candidates` or a dict of arrays."""
    return c.size if hasattr(c, "size") and not isinstance(c, dict) else len(c["ratio"])


def assumed_gear_note(env) -> str:
    """The note of an assumed gear: what it leaves out and which totals hold the envelope's estimates."""
    est = [k for k, key in (("mass", "mass_per_stage"), ("length", "length_per_stage"), ("price", "price"))
           if key in env.assumed_gear]
    if not est:
        return "assumed gear: ratings, mass, size and price not included"
    left = [k for k in ("mass", "size" if "length" not in est else "diameter", "price") if k not in est]
    return (f"assumed gear: ratings{', ' + ', '.join(left) if left else ''} not included; "
            f"{', '.join(est)} include estimates (gearing.assumed)")


def _notes(c, env=None) -> np.ndarray:
    """The notes of every candidate, "; "-joined (N,) object array."""
    n = _size(c)
    gear_text = assumed_gear_note(env) if env is not None else \
        "assumed gear: ratings, mass, size and price not included"
    basis = _text_array(c.get("basis_note", ""), n)
    basis = np.where(np.asarray(c.get("basis_refused", np.zeros(n, bool)), dtype=bool), "", basis)  # refused: the reason says it
    parts = {"speed": np.where(np.asarray(c["speed_from_no_load"], dtype=bool),
                               "motor speed limit taken from the no-load speed", "").astype(object),
             "gear": np.where(np.asarray(c["kind"]) == GEAR_ASSUMED, gear_text, "").astype(object),
             "basis": basis.astype(object),
             "brush": _text_array(c.get("brush_note", ""), n),
             "price": _text_array(c.get("price_note", ""), n),
             "motor": _text_array(c.get("motor_note", ""), n)}
    return _join(parts, "; ", n)


def estimate_flags(env, kind) -> np.ndarray:
    """Per candidate, which totals hold the envelope's estimates for assumed gears (``"mass, price"``; empty for
    catalogue parts and direct drive)."""
    est = [k for k, key in (("mass", "mass_per_stage"), ("length", "length_per_stage"), ("price", "price"))
           if key in env.assumed_gear]
    return np.where(np.asarray(kind) == GEAR_ASSUMED, ", ".join(est), "").astype(object)
