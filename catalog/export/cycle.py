"""The duty cycle at the gear output as a table and as a plot of speed and torque over one cycle.

:func:`cycle_frame` is the table ``motorshelf cycle`` prints (and the HTML
report shows); :func:`plot_cycle` draws one cycle: the gear output speed
(linear within a segment) above and the torque (constant within a segment,
with the acceleration of the load's masses) below, on one time axis, each
segment named.  Inputs are a :class:`catalog.select.motion.GearOutputCycle`
(``Catalog.cycle(envelope)``); values are shown in a display preset.
"""
from __future__ import annotations

__all__ = ["cycle_frame", "plot_cycle"]

import math

from .plots import PALETTE


def cycle_frame(cyc, units: str = "metric"):
    """The segments as a DataFrame: name, source, time [s], torque, speeds at start and end (units in headers)."""
    import numpy as np
    import pandas as pd

    from ..units import to_display

    def shown(values, dimension):
        return to_display(np.asarray(values, dtype=float), dimension, units)

    torque, t_unit = shown(cyc.torque, "torque")
    speeds, w_unit = shown(cyc.speed_start + cyc.speed_end, "angular_speed")
    n = len(cyc.names)
    duration = [math.nan if d is None else d for d in cyc.duration]
    return pd.DataFrame({
        "segment": cyc.names,
        "from": [s.key for s in cyc.sources],
        "time [s]": np.asarray(duration, dtype=float),
        f"torque [{t_unit}]": torque,
        f"speed start [{w_unit}]": speeds[:n],
        f"speed end [{w_unit}]": speeds[n:],
    })


def plot_cycle(cyc, units: str = "metric", title: str | None = None):
    """Speed and torque at the gear output over one cycle; returns a matplotlib Figure (None for operating
    points, which have no time).

    Each segment is drawn over its duration: speed linear from its start to
    its end value, torque constant; segment boundaries are thin vertical
    lines and each move (or written segment) is named at the top over its
    span (a span too short for its name is left unnamed rather than overprinted).
    """
    import numpy as np
    from matplotlib.figure import Figure

    from ..units import to_display

    if cyc.mode == "points" or not len(cyc.names):
        return None
    dur = np.asarray(cyc.duration, dtype=float)
    t0 = np.concatenate([[0.0], np.cumsum(dur)[:-1]])
    t1 = t0 + dur
    speeds, w_unit = to_display(np.asarray(cyc.speed_start + cyc.speed_end, dtype=float), "angular_speed", units)
    n = len(cyc.names)
    w0, w1 = speeds[:n], speeds[n:]
    torque, t_unit = to_display(np.asarray(cyc.torque, dtype=float), "torque", units)
    fig = Figure(figsize=(8.0, 5.0), dpi=110, layout="constrained")
    ax_w, ax_t = fig.subplots(2, 1, sharex=True)
    ax_w.plot(np.column_stack([t0, t1]).ravel(), np.column_stack([w0, w1]).ravel(), color=PALETTE["point"],
              linewidth=1.8, gid="speed")
    ax_t.plot(np.column_stack([t0, t1]).ravel(), np.repeat(torque, 2), color=PALETTE["hot"], linewidth=1.8,
              gid="torque", drawstyle="default")
    # the vertical jumps of torque between segments
    ax_t.vlines(t1[:-1], np.minimum(torque[:-1], torque[1:]), np.maximum(torque[:-1], torque[1:]),
                color=PALETTE["hot"], linewidth=1.8)
    period = float(t1[-1])
    for ax, label in ((ax_w, f"speed [{w_unit}]"), (ax_t, f"torque [{t_unit}]")):
        ax.grid(True, color=PALETTE["grid"], linewidth=0.8)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
        ax.tick_params(colors=PALETTE["text"], labelsize=9)
        ax.axhline(0.0, color=PALETTE["max_speed"], linewidth=0.8)
        for x in t1[:-1]:
            ax.axvline(x, color=PALETTE["grid"], linewidth=0.8, zorder=0)
        ax.set_ylabel(label, color=PALETTE["text"], fontsize=10)
        ax.margins(x=0.0, y=0.18)
    ax_t.set_xlim(0.0, period)
    ax_t.set_xlabel("time in the cycle [s]", color=PALETTE["text"], fontsize=10)
    # the name of each move (or written segment) over its span, where the span holds it (about 0.9 % of
    # the axis per character at this size)
    spans = []
    for src, name, a, b in zip(cyc.sources, cyc.names, t0, t1):
        key = (src.key, src.name) if src.phase else (src.key, name)
        if spans and spans[-1][0] == key:
            spans[-1][3] = b
        else:
            spans.append([key, key[1], a, b])
    for _, name, a, b in spans:
        if (b - a) / period >= 0.009 * len(name) + 0.01:
            ax_w.annotate(name, ((a + b) / 2.0, 1.0), xycoords=("data", "axes fraction"), ha="center",
                          va="bottom", fontsize=7.5, color=PALETTE["text"], annotation_clip=False)
    fig.suptitle(title or f"Duty cycle of {cyc.envelope} at the gear output", fontsize=12,
                 color=PALETTE["text"])
    return fig
