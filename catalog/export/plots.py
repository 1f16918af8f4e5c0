"""Speed-torque diagrams of a motor (matplotlib, no pyplot).

One diagram per candidate shows, with torque across and speed up:

* the speed-torque line at the worst-case voltage at the motor (minimum
  supply less the drive drop) with the winding and magnet *hot* (at the
  computed winding temperature: hot R, hot Kt and Ke);
* the line at the nominal supply (less the drive drop) *cold* (winding and
  magnet at the ambient temperature);
* the continuous-operation limit of the two-node thermal model at the
  ambient: the torque at the largest continuous current
  (:func:`catalog.physics.max_continuous_current`), Kt taken at the winding
  limit.  The model has copper loss only and constant friction, so the
  limit does not depend on speed: a vertical line;
* the torque at the drive's peak current (hot Kt) and the maximum speed of
  the motor (and of the gearhead's input);
* every duty-cycle segment (a short vertical stroke for a speed ramp: the
  torque is constant within a segment) labelled with its name, and the RMS
  point (RMS torque at the mean speed).

Everything is computed in SI on the motor shaft; ``side="load"`` maps each
point through the gear (speed/n, torque·n·η where the motor drives,
torque·n/η where the load drives) and the axes show the chosen display
preset.  A point running backwards is mirrored into the first quadrant
(torque × direction, |speed|), so braking shows as negative torque.

Inputs are plain values: :class:`MotorModel`, :class:`Conditions` and a
list of :class:`OperatingPoint`; :mod:`catalog.export.detail` builds them
from a selection.
"""
from __future__ import annotations

__all__ = ["MotorModel", "Conditions", "OperatingPoint", "characteristics", "plot_speed_torque",
           "plot_comparison", "save_figure", "to_side", "temperature_text", "PALETTE"]

import math
from pathlib import Path

from .lines import Conditions, MotorModel, OperatingPoint, characteristics, mirror, rms_point, to_side

#: Colours of the diagram elements (our own scheme).
PALETTE = {"hot": "#B0412E", "cold": "#5E8799", "thermal": "#C98512", "peak": "#7D4E9F",
           "max_speed": "#4A4A4A", "gear_max_speed": "#9A9A9A", "point": "#1F4E5F", "rms": "#B0412E",
           "gear_continuous_torque": "#3F7F3A", "gear_peak_torque": "#7FA86F",
           "grid": "#E4E4E4", "text": "#222222"}
_SERIES = ["#1F4E5F", "#B0412E", "#C98512", "#7D4E9F", "#3F7F3A", "#5E8799"]


def _num(v) -> str:
    """About four significant digits without an exponent in the usual range: 10300, 31.16, 0.0123."""
    if not math.isfinite(v):
        return str(v)
    a = abs(v)
    if a >= 1000 and a < 1e9:
        return f"{v:.0f}"
    if a != 0 and (a < 1e-3 or a >= 1e9):
        return f"{v:.3e}"
    return f"{v:.4g}"


def temperature_text(kelvin: float, preset: str = "datasheet") -> str:
    """A temperature [K] as text in the preset's unit: ``'66 °C'``, ``'151 °F'``, ``'339 K'``."""
    from ..units import display_unit, parse_unit

    label = display_unit("temperature", preset)
    conv = parse_unit(label, "temperature")
    return f"{(kelvin - conv.offset) / conv.factor:.0f} {label}" if math.isfinite(kelvin) else "unknown"


def _units(preset: str):
    from ..units import display_unit, parse_unit

    out = {}
    for dim in ("torque", "angular_speed"):
        label = display_unit(dim, preset)
        conv = parse_unit(label, dim)
        out[dim] = (label, conv.factor, conv.offset)
    return out


def _style(ax):
    ax.grid(True, color=PALETTE["grid"], linewidth=0.8)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(colors=PALETTE["text"], labelsize=9)


def _quiet(func):
    """Draw with numpy's floating-point warnings off: extreme values overflow to inf (refused by
    :func:`_drawable`), numpy's warnings about it would only be noise on the terminal."""
    import functools

    @functools.wraps(func)
    def quiet(*args, **kwargs):
        import numpy as np

        with np.errstate(all="ignore"):
            return func(*args, **kwargs)

    return quiet


def _figure(width=8.0, height=5.6):
    from matplotlib.figure import Figure

    return Figure(figsize=(width, height), dpi=110, layout="constrained")


@_quiet
def plot_speed_torque(model: MotorModel, cond: Conditions, points=(), units: str = "datasheet",
                      side: str = "motor", title: str | None = None, subtitle: str | None = None):
    """The speed-torque diagram of one motor; returns a matplotlib Figure.

    Each drawn element carries a ``gid`` (``hot``, ``cold``, ``continuous``,
    ``peak``, ``max_speed``, ``gear_max_speed``, ``segment-<i>``, ``rms``) so
    that its data can be read back (``Line2D.get_xydata``), in display units.
    """
    import numpy as np

    u = _units(units)
    (tl, tf, to), (wl, wf, wo) = u["torque"], u["angular_speed"]
    ch = characteristics(model, cond)
    fig = _figure()
    ax = fig.add_subplot(1, 1, 1)
    _style(ax)

    def disp(t, w):
        ts, ws = to_side(t, w, model, side)
        return (np.asarray(ts) - to) / tf, (np.asarray(ws) - wo) / wf

    mirrored = [mirror(p) for p in points]
    t_low = min([0.0] + [m[1] for m in mirrored])
    w_top = []
    for key, style in (("hot", dict(ls="-", lw=2.4, zorder=3)), ("cold", dict(ls=(0, (6, 3)), lw=1.6, zorder=2))):
        c = ch[key]
        if not (math.isfinite(c["stall_torque"]) and math.isfinite(c["no_load_speed"])):
            continue
        ts = np.array(([t_low * 1.15] if t_low < 0 else []) + [0.0, c["stall_torque"]])
        ws = np.array([c["no_load_speed"] - t * c["no_load_speed"] / c["stall_torque"] for t in ts])
        x, y = disp(ts, ws)
        word = "hot" if key == "hot" else "cold"
        label = (f"{word}: {c['voltage']:.1f} V at the motor, winding {temperature_text(c['temperature'], units)} — "
                 f"stall {_num(x[-1])} {tl}, no load {_num(y[-2])} {wl}")
        ax.plot(x, y, color=PALETTE[key], gid=key, label=label, solid_capstyle="round", **style)
        w_top.append(float(np.max(y)))
    x_right = [0.0]
    for key in ("hot", "cold"):
        if math.isfinite(ch[key]["stall_torque"]):
            x_right.append(float(disp([ch[key]["stall_torque"]], [0.0])[0][0]))
    pts = []
    for i, (p, (d, t, w0, w1)) in enumerate(zip(points, mirrored)):
        x, y = disp([t, t], [w0, w1])
        pts.append((p, x, y))
        w_top.append(float(np.max(y)))
        x_right.append(float(np.max(x)))
    rms_pt = rms_point(points)
    if rms_pt is not None:
        rx, ry = disp([rms_pt[0]], [rms_pt[1]])
        x_right.append(float(rx[0]))
    if math.isfinite(ch["continuous_torque"]):
        x_right.append(float(disp([ch["continuous_torque"]], [0.0])[0][0]))
    for key in ("max_speed", "gear_max_speed"):
        if math.isfinite(ch[key]):
            w_top.append(float(disp([0.0], [ch[key]])[1][0]))
    y_max = 1.08 * max([v for v in w_top if math.isfinite(v)] + [1.0])
    x_max = 1.06 * max(v for v in x_right if math.isfinite(v)) or 1.0
    x_min = min(0.0, 1.1 * min([float(np.min(x)) for _, x, _ in pts] + [0.0]))
    _drawable(fig, title or model.label, x_min, x_max, y_max)
    ax.set_xlim(x_min, x_max)
    ax.set_ylim(0.0, y_max)

    def vline(torque, key, label, **style):
        if not math.isfinite(torque):
            return
        x, _ = disp([torque], [0.0])
        text = label.format(x=_num(x[0]), u=tl) + (" (off the chart)" if x[0] > x_max else "")
        ax.plot([x[0], x[0]], [0.0, y_max], color=PALETTE[key], gid=key, label=text, **style)

    th_label = (f"continuous limit (thermal, ambient {temperature_text(cond.ambient_temperature, units)}, "
                f"winding ≤ {temperature_text(model.max_winding_temperature, units)}): {{x}} {{u}}")
    vline(ch["continuous_torque"], "thermal", th_label, lw=2.0, ls=(0, (8, 2, 2, 2)))
    vline(ch["peak_torque"], "peak", f"drive peak current {cond.peak_current:.3g} A: {{x}} {{u}}",
          lw=1.8, ls=(0, (1.5, 2)))
    vline(ch["gear_continuous_torque"], "gear_continuous_torque",
          "gearhead continuous output rating: {x} {u}", lw=1.5, ls=(0, (5, 2)))
    vline(ch["gear_peak_torque"], "gear_peak_torque", "gearhead intermittent output rating: {x} {u}",
          lw=1.5, ls=(0, (2, 2)))
    for key, text in (("max_speed", "motor speed limit"), ("gear_max_speed", "gearhead input limit")):
        if math.isfinite(ch[key]):
            _, y = disp([0.0], [ch[key]])
            ax.plot([x_min, x_max], [y[0], y[0]], color=PALETTE[key], lw=1.2, ls=(0, (4, 3)), gid=key,
                    label=f"{text}: {_num(y[0])} {wl}")
    lab = _Labeller(ax, (x_min, x_max), (0.0, y_max))
    for _, x, y in pts:
        lab.block(x, y)
    if rms_pt is not None:
        lab.block(rx, ry, 6.5)
    for i, (p, x, y) in enumerate(pts):
        hollow = p.kind == "peak"
        ramp = y[0] != y[-1]
        ax.plot(x, y, color=PALETTE["point"], lw=1.6, marker="s" if hollow else "o", markersize=6,
                markerfacecolor="white" if hollow else PALETTE["point"], gid=f"segment-{i}",
                markevery=[1] if ramp else None, zorder=4,
                label=("operating points (● continuous, □ peak)" if i == 0 and p.kind != "segment" else
                       "cycle segments (○ → ● for a speed ramp)" if i == 0 else "_nolegend_"))
        if ramp:
            ax.plot(x[:1], y[:1], ls="none", marker="o", markersize=4.5, color=PALETTE["point"],
                    markerfacecolor="white", gid=f"segment-{i}-start", label="_nolegend_", zorder=4)
        lab.place(p.name, x[-1], (y[0] + y[-1]) / 2 if ramp else y[-1])
    if rms_pt is not None:
        ax.plot(rx, ry, ls="none", marker="D", markersize=9, color=PALETTE["rms"], markeredgecolor="black",
                gid="rms", label=f"RMS torque {_num(rx[0])} {tl} at mean speed {_num(ry[0])} {wl}", zorder=5)
    where = "motor shaft" if side == "motor" or model.ratio == 1 else f"gear output (ratio {model.ratio:g})"
    ax.set_xlabel(f"torque at the {where} [{tl}]", fontsize=10, color=PALETTE["text"])
    ax.set_ylabel(f"speed [{wl}]", fontsize=10, color=PALETTE["text"])
    ax.set_title(title or model.label, loc="left", fontsize=12, fontweight="bold", color=PALETTE["text"],
                 pad=18 if subtitle else 6)
    if subtitle:
        ax.text(0.0, 1.015, subtitle, transform=ax.transAxes, fontsize=8.5, color="#555555", va="bottom")
    fig.legend(loc="outside lower center", ncol=1, fontsize=8, frameon=False, handlelength=3.2)
    return fig


class _Labeller:
    """Places point labels where they cover neither another label nor a marker.

    Works in axes fractions with an estimate of the text size (8 pt text on
    an axes of about 7 × 3.4 inches); good enough for a handful of labels.
    """

    _OFFSETS = [(6, 4, "left"), (6, -13, "left"), (-6, 4, "right"), (-6, -13, "right"),
                (6, 16, "left"), (-6, 16, "right"), (6, -25, "left"), (-6, -25, "right"), (6, 28, "left")]

    def __init__(self, ax, xlim, ylim, width_pt=500.0, height_pt=250.0):
        self.ax, self.xlim, self.ylim = ax, xlim, ylim
        self.wpt, self.hpt = width_pt, height_pt
        self.boxes = []

    def _frac(self, x, y):
        (x0, x1), (y0, y1) = self.xlim, self.ylim
        return (x - x0) / ((x1 - x0) or 1.0), (y - y0) / ((y1 - y0) or 1.0)

    def block(self, xs, ys, radius_pt=5.0):
        """Mark a marker (or the stroke through several points) as occupied."""
        fx = [self._frac(x, y)[0] for x, y in zip(xs, ys)]
        fy = [self._frac(x, y)[1] for x, y in zip(xs, ys)]
        rx, ry = radius_pt / self.wpt, radius_pt / self.hpt
        self.boxes.append((min(fx) - rx, min(fy) - ry, max(fx) + rx, max(fy) + ry))

    def place(self, text, x, y, bold=False):
        fx, fy = self._frac(x, y)
        w, h = (len(text) * (5.4 if bold else 5.0) + 4) / self.wpt, 11.0 / self.hpt
        best = None
        for dx, dy, ha in self._OFFSETS:
            bx0 = fx + dx / self.wpt - (w if ha == "right" else 0.0)
            by0 = fy + dy / self.hpt - 2 / self.hpt
            box = (bx0, by0, bx0 + w, by0 + h)
            inside = box[0] >= -0.01 and box[2] <= 1.01 and box[1] >= -0.02 and box[3] <= 1.02
            hits = sum(1 for b in self.boxes if b[0] < box[2] and box[0] < b[2] and b[1] < box[3] and box[1] < b[3])
            score = hits + (0 if inside else 5)
            if best is None or score < best[0]:
                best = (score, dx, dy, ha, box)
            if score == 0:
                break
        _, dx, dy, ha, box = best
        self.boxes.append(box)
        self.ax.annotate(text, (x, y), xytext=(dx, dy), textcoords="offset points", fontsize=8, ha=ha,
                         color=PALETTE["text"], fontweight="bold" if bold else "normal", zorder=6,
                         bbox=dict(boxstyle="round,pad=0.12", fc="white", ec="none", alpha=0.75))


@_quiet
def plot_comparison(entries, units: str = "datasheet", side: str = "load", title: str = "", load=None):
    """The hot speed-torque lines, continuous limits and points of several candidates.

    ``entries`` is a list of ``(model, conditions, points)``; each candidate
    gets one colour (line ``hot-<i>``, limit ``continuous-<i>``, points
    ``points-<i>``).  Load side by default: the same load in every candidate.
    ``load`` (with ``side="load"``): the envelope's points at the gear output
    (SI), drawn once in black (``load-<i>``) instead of each candidate's points.
    """
    import numpy as np

    u = _units(units)
    (tl, tf, to), (wl, wf, wo) = u["torque"], u["angular_speed"]
    fig = _figure(8.0, 5.8)
    ax = fig.add_subplot(1, 1, 1)
    _style(ax)
    x_hi, y_hi = [1e-12], [1e-12]
    for i, (model, cond, points) in enumerate(entries):
        colour = _SERIES[i % len(_SERIES)]
        ch = characteristics(model, cond)
        hot = ch["hot"]

        def disp(t, w, model=model):
            ts, ws = to_side(t, w, model, side)
            return (np.asarray(ts) - to) / tf, (np.asarray(ws) - wo) / wf

        x, y = disp([0.0, hot["stall_torque"]], [hot["no_load_speed"], 0.0])
        ax.plot(x, y, color=colour, lw=2.2, gid=f"hot-{i}", label=f"{i + 1}. {model.label}")
        x_hi.append(float(np.nanmax(x)))
        y_hi.append(float(np.nanmax(y)))
        if math.isfinite(ch["continuous_torque"]):
            cx, _ = disp([ch["continuous_torque"]], [0.0])
            ax.plot([cx[0], cx[0]], [0.0, float(np.nanmax(y))], color=colour, lw=1.4, ls=(0, (6, 2, 2, 2)),
                    gid=f"continuous-{i}", label="_nolegend_")
        if points and not (load and side == "load"):
            mir = [mirror(p) for p in points]
            px, py = disp([m[1] for m in mir] + [m[1] for m in mir], [m[2] for m in mir] + [m[3] for m in mir])
            ax.plot(px, py, ls="none", marker="osD^v"[i % 5], markersize=5.5, color=colour,
                    markeredgecolor="white", markeredgewidth=0.6, alpha=0.9, gid=f"points-{i}",
                    label="_nolegend_", zorder=4)
            x_hi.append(float(np.nanmax(px)))
    if load and side == "load":
        for k, p in enumerate(load):
            _, t, w0, w1 = mirror(p)
            px, py = (np.array([t, t]) - to) / tf, (np.array([w0, w1]) - wo) / wf
            ax.plot(px, py, color="black", lw=1.4, marker="o", markersize=5, markerfacecolor="white",
                    markevery=[1] if w0 != w1 else None, gid=f"load-{k}", zorder=5,
                    label="the load (envelope segments)" if k == 0 else "_nolegend_")
            ax.annotate(p.name, (px[-1], (py[0] + py[-1]) / 2), xytext=(5, 3), textcoords="offset points",
                        fontsize=7.5, color=PALETTE["text"], zorder=6)
            x_hi.append(float(np.max(px)))
    _drawable(fig, title or "the comparison", min(0.0, ax.get_xlim()[0]), 1.06 * max(x_hi), 1.08 * max(y_hi))
    ax.set_xlim(min(0.0, ax.get_xlim()[0]), 1.06 * max(x_hi))
    ax.set_ylim(0.0, 1.08 * max(y_hi))
    where = "gear output" if side == "load" else "motor shaft"
    ax.set_xlabel(f"torque at the {where} [{tl}]", fontsize=10)
    ax.set_ylabel(f"speed [{wl}]", fontsize=10)
    ax.set_title(title or "Shortlist compared", loc="left", fontsize=12, fontweight="bold", pad=18)
    ax.text(0.0, 1.015, "solid: hot line at the worst-case voltage · dash-dot: continuous (thermal) limit",
            transform=ax.transAxes, fontsize=8.5, color="#555555", va="bottom")
    if ax.get_legend_handles_labels()[0]:
        fig.legend(loc="outside lower center", ncol=2, fontsize=8, frameon=False)
    return fig


def _drawable(fig, what: str, *limits) -> None:
    """Refuse a diagram whose axes would reach beyond floating point (a record with values such as
    1e300 N·m): one clear error instead of matplotlib's."""
    if all(math.isfinite(v) for v in limits):
        return
    import matplotlib.pyplot as plt

    from ..errors import InputError, Problem

    plt.close(fig)
    message = (f"{what}: the diagram would reach beyond floating point (values such as 1e300 in the record), "
               "expected the values of a real motor; check the record with `motorshelf show`")
    raise InputError(message, [Problem("plot", None, None, message)])


def save_figure(fig, path, fmt: str | None = None) -> Path:
    """Save ``fig`` as PNG or SVG (from the extension unless ``fmt``); returns the path."""
    path = Path(path)
    fmt = fmt or path.suffix.lower().lstrip(".")
    if fmt not in ("png", "svg"):
        raise ValueError(f"plots are written as .png or .svg, got {path.name!r}")
    import matplotlib

    from ..store.files import output_file

    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": path.stem}), output_file(path) as tmp:
        fig.savefig(tmp, format=fmt, dpi=150 if fmt == "png" else None,
                    metadata={"Date": None} if fmt == "svg" else None)
    return path
