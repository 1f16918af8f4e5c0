"""Diagrams of a selection's candidates: figures and files.

Thin glue between a :class:`catalog.select.Selection` (via
:mod:`catalog.export.detail`) and :mod:`catalog.export.plots`.
"""
from __future__ import annotations

__all__ = ["candidate_figure", "comparison_figure", "write_plots"]

from pathlib import Path


def candidate_figure(selection, candidate_id: str, catalog=None, units: str = "metric",
                     side: str = "motor", title: str | None = None):
    """The speed-torque diagram of one candidate (a matplotlib Figure)."""
    from .detail import candidate_detail
    from .plots import plot_speed_torque

    d = candidate_detail(selection, candidate_id, catalog)
    return plot_speed_torque(d.model, d.conditions, d.points, units, side, title=title or candidate_id,
                             subtitle=f"envelope {selection.envelope.name} · {units} units")


def comparison_figure(selection, candidates=None, catalog=None, units: str = "metric", top: int = 4):
    """The top ``top`` (or the given) candidates in one diagram at the gear output."""
    from .detail import candidate_detail, load_points, records_used
    from .plots import plot_comparison

    ids = list(candidates) if candidates is not None else list(selection.shortlist["candidate"][:top])
    motors, gears = records_used(selection, catalog, ids)
    details = [candidate_detail(selection, cid, catalog, motors, gears) for cid in ids]
    return plot_comparison([(d.model, d.conditions, d.points) for d in details], units, "load",
                           title=f"Top {len(ids)} compared", load=load_points(selection.envelope))


def _safe(name: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_.@+" else "_" for ch in name)


def write_plots(selection, folder, catalog=None, units: str = "metric", side: str = "motor",
                fmt: str = "png", candidates=None, compare: int = 4) -> list[Path]:
    """One diagram file per shortlisted (or given) candidate and ``compare.<fmt>``; returns the paths."""
    from .detail import candidate_detail, load_points, records_used
    from .plots import plot_comparison, plot_speed_torque, save_figure

    folder = Path(folder)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        from ..errors import InputError, Problem

        text = f"{folder}: cannot create the folder ({exc.strerror or exc}); nothing was written"
        raise InputError(f"--out: {text}", [Problem("--out", None, None, text)]) from None
    ids = list(candidates) if candidates is not None else list(selection.shortlist["candidate"])
    if not ids:
        return []
    motors, gears = records_used(selection, catalog, ids)
    details = [candidate_detail(selection, cid, catalog, motors, gears) for cid in ids]
    out = []
    for i, d in enumerate(details, start=1):
        fig = plot_speed_torque(d.model, d.conditions, d.points, units, side, title=f"{i}. {d.candidate}",
                                subtitle=f"envelope {selection.envelope.name} · {units} units")
        out.append(save_figure(fig, folder / f"{i:02d}-{_safe(d.candidate)}.{fmt}"))
    if len(details) > 1 and compare > 1:
        entries = [(d.model, d.conditions, d.points) for d in details[:compare]]
        fig = plot_comparison(entries, units, "load", title=f"Top {len(entries)} compared",
                              load=load_points(selection.envelope))
        out.append(save_figure(fig, folder / f"compare.{fmt}"))
    return out
