"""Running the checks of :mod:`catalog.select.registry`: margins, verdicts, reason texts.

Every registered check gives a margin per candidate (``*_margin`` columns)
and a failure mask; a candidate passes when no check fails.  Reason texts are
built column-wise with pandas string operations, only for the rows asked for.
"""
from __future__ import annotations

__all__ = ["CHECKS", "run_checks", "reason_texts", "check_keys", "assumed_gear_note", "estimate_flags"]

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
    texts : DataFrame or None
        One text column per check key (empty where the check passed); None
        without ``with_texts`` (the verdicts never depend on the texts, so
        :func:`reason_texts` builds them later for the rows asked for).
    notes : Series or None
        The notes of every candidate (with ``with_texts``).
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
                texts[check.key] = pd.Series([""] * n, dtype=object)
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
        if with_texts:   # built only if a row failed
            if not fail.any():
                texts[check.key] = pd.Series([""] * n, dtype=object)
                continue
            text = check.reason(x, m)
            texts[check.key] = pd.Series(text if isinstance(text, pd.Series) else [text] * n).where(
                pd.Series(fails[check.key]), "")
    margins["smallest_margin"] = smallest
    return margins, fails, (pd.DataFrame(texts) if with_texts else None), (_notes(c, env) if with_texts else None)


def check_keys(env) -> tuple:
    """The candidate columns the checks active for ``env`` read."""
    keys = ["kind"]
    for check in REGISTRY:
        if check.applies(env):
            keys += [k for k in check.needs if k not in keys]
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


def assumed_gear_note(env) -> str:
    """The note of an assumed gear: what it leaves out and which totals hold the envelope's estimates."""
    est = [k for k, key in (("mass", "mass_per_stage"), ("length", "length_per_stage"), ("price", "price"))
           if key in env.assumed_gear]
    if not est:
        return "assumed gear: ratings, mass, size and price not included"
    left = [k for k in ("mass", "size" if "length" not in est else "diameter", "price") if k not in est]
    return (f"assumed gear: ratings{', ' + ', '.join(left) if left else ''} not included; "
            f"{', '.join(est)} include estimates (gearing.assumed)")


def _notes(c, env=None):
    n = _size(c)
    notes = pd.Series([""] * n)
    notes = notes.where(~c["speed_from_no_load"], "motor speed limit taken from the no-load speed")
    assumed = c["kind"] == GEAR_ASSUMED
    text = assumed_gear_note(env) if env is not None else "assumed gear: ratings, mass, size and price not included"
    gear_note = pd.Series(np.where(assumed, text, ""))
    out = notes + np.where((notes != "") & (gear_note != ""), "; ", "") + gear_note
    extra = pd.Series(c.get("price_note", np.full(n, "", dtype=object)))
    extra_motor = pd.Series(c.get("motor_note", np.full(n, "", dtype=object)))
    basis = pd.Series(c.get("basis_note", np.full(n, "", dtype=object)), dtype=object).where(
        ~pd.Series(c.get("basis_refused", np.zeros(n, bool)), dtype=bool), "")   # refused: the reason says it
    brush = pd.Series(c.get("brush_note", np.full(n, "", dtype=object)), dtype=object)
    for more in (basis, brush, extra, extra_motor):
        out = out + np.where((out != "") & (more != ""), "; ", "") + more
    return out


def estimate_flags(env, kind) -> np.ndarray:
    """Per candidate, which totals hold the envelope's estimates for assumed gears (``"mass, price"``; empty for
    catalogue parts and direct drive)."""
    est = [k for k, key in (("mass", "mass_per_stage"), ("length", "length_per_stage"), ("price", "price"))
           if key in env.assumed_gear]
    return np.where(np.asarray(kind) == GEAR_ASSUMED, ", ".join(est), "").astype(object)
