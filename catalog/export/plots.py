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
(torque × direction, |speed|), so braking shows as negative torque: such a
back-driven point (the load drives the motor) is drawn as a hollow triangle
and explained in the legend, and the current limits are drawn for it too.

The axes are scaled to what matters: the operating points, the hot line above
them and the limits near them (:func:`_extent`); a limit or stall torque far
away is named in the legend "off the chart" instead of squeezing the points
into a corner.  Units are chosen by magnitude within the preset.  The title
names the side (motor shaft or gear output) and the corner (hot, worst-case
supply); points on one spot share one label, and labels are placed clear of
one another, of the markers and of the lines.

Inputs are plain values: :class:`MotorModel`, :class:`Conditions` and a
list of :class:`OperatingPoint`; :mod:`catalog.export.detail` builds them
from a selection.
"""
from __future__ import annotations

__all__ = ["MotorModel", "Conditions", "OperatingPoint", "characteristics", "plot_speed_torque",
           "plot_comparison", "save_figure", "to_side", "temperature_text", "PALETTE", "corner_title", "NEAR",
           "NEAR_SPEED"]

import math
from pathlib import Path

from .formats import IMAGE_FORMATS
from .lines import Conditions, MotorModel, OperatingPoint, characteristics, mirror, rms_point, to_side

#: Colours of the diagram elements (our own scheme).
PALETTE = {"hot": "#B0412E", "cold": "#5E8799", "thermal": "#C98512", "peak": "#7D4E9F",
           "max_speed": "#4A4A4A", "gear_max_speed": "#9A9A9A", "point": "#1F4E5F", "rms": "#B0412E",
           "back": "#2F7D8C",
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


def temperature_text(kelvin: float, preset: str = "metric") -> str:
    """A temperature [K] as text in the preset's unit: ``'66 °C'``, ``'151 °F'``, ``'339 K'``."""
    from ..units import display_unit, parse_unit

    label = display_unit("temperature", preset)
    conv = parse_unit(label, "temperature")
    return f"{(kelvin - conv.offset) / conv.factor:.0f} {label}" if math.isfinite(kelvin) else "unknown"


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


#: A limit (or the stall region) is drawn within the axes when it lies within this many
#: operating-point spans beyond the farthest point; farther limits are named in the legend.
NEAR = 1.0
#: A speed (no-load, speed limits, the cold line) is kept within the axes up to this
#: factor above the highest speed that matters (the points and the hot line above them).
NEAR_SPEED = 1.5


def _extent(xs, ys, vlimits, stalls, line_speed_at, hlimits):
    """The axes (x_min, x_max, y_max) [SI] that show what matters.

    ``xs``/``ys``: torques and speeds of the operating points (and the RMS point);
    ``vlimits``: torques of vertical limits; ``stalls``: torques where the lines meet
    the torque axis; ``line_speed_at(x)`` → speeds of the hot line at torques ``x``;
    ``hlimits``: speeds of the other lines and limits.  The torque axis spans the
    points plus the limits within :data:`NEAR` spans of them (the stall region only
    when it lies that close); the speed axis the points, the hot line above each
    of them, and other speeds within :data:`NEAR_SPEED` of that.
    """
    import numpy as np

    xs = [float(x) for x in xs if math.isfinite(x)]
    ys = [float(y) for y in ys if math.isfinite(y)]
    limits = [float(v) for v in list(vlimits) + list(stalls) if math.isfinite(v)]
    if not xs:                                  # no point: the whole line
        xs = [0.0] + [v for v in stalls if math.isfinite(v)]
        ys = ys or [0.0]
    hi, lo = max(max(xs), 0.0), min(min(xs), 0.0)
    span = max(hi - lo, 1e-12)
    near_hi, near_lo = hi + NEAR * span, lo - NEAR * span
    right = max([hi] + [v for v in limits if 0 < v <= near_hi])
    left = min([lo] + [v for v in limits if near_lo <= v < 0]) if lo < 0 else 0.0
    if right <= 0:
        right = 0.25 * span
    pad = 0.08 * (right - left)
    x_min, x_max = (left - pad if left < 0 else 0.0), right + pad
    at_points = np.asarray(line_speed_at(np.asarray(xs, dtype=float)), dtype=float)
    base = max(ys + [float(v) for v in at_points if math.isfinite(v)] + [0.0])
    if base <= 0:
        base = max([float(v) for v in hlimits if math.isfinite(v) and v > 0] + [1.0])
    top = max([base] + [float(v) for v in hlimits if math.isfinite(v) and 0 < v <= NEAR_SPEED * base])
    return x_min, x_max, 1.08 * top


def _merged_labels(items):
    """``(name, x, y)`` label spots of drawn points: points drawn on the same spot get one label.

    ``items`` holds ``(name, xs, ys)`` per point (a ramp is labelled at its middle);
    names on one spot are joined with " / " in their order.
    """
    spots: dict = {}
    for name, xs, ys in items:
        ramp = ys[0] != ys[-1]
        x, y = float(xs[-1]), float((ys[0] + ys[-1]) / 2 if ramp else ys[-1])
        key = (round(x, 9), round(float(ys[0]), 9), round(float(ys[-1]), 9))
        if key in spots:
            if name not in spots[key][0]:
                spots[key][0].append(name)
        else:
            spots[key] = ([name], x, y)
    return [(" / ".join(names), x, y) for names, x, y in spots.values()]


def _motor_torque(torque: float, model: MotorModel, side: str) -> float:
    """The motor shaft torque [N·m] of a torque on ``side`` (running forwards)."""
    from ..physics import motor_side_torque

    if side == "motor":
        return float(torque)
    return float(motor_side_torque(torque, 1.0, model.ratio, model.efficiency))


def _side_words(model: MotorModel, side: str) -> str:
    if side == "motor" or model.ratio == 1 and model.efficiency == 1:
        return "at the motor shaft"
    return f"at the gear output (ratio {model.ratio:g})"


def corner_title(title: str, model: MotorModel, cond: Conditions, side: str, units: str) -> str:
    """Two title lines: the candidate, then the side and the corner the diagram shows."""
    where = _side_words(model, side).removeprefix("at the ")
    return (f"{title}\n{where} · hot, worst-case supply {cond.voltage:.3g} V · winding "
            f"{temperature_text(cond.winding_temperature, units)}")


@_quiet
def plot_speed_torque(model: MotorModel, cond: Conditions, points=(), units: str = "metric",
                      side: str = "motor", title: str | None = None, subtitle: str | None = None):
    """The speed-torque diagram of one motor; returns a matplotlib Figure.

    The axes show the operating points and the limits near them (:func:`_extent`):
    a limit farther away is named in the legend "off the chart", and the stall
    region is drawn only where it fits.  The title states the side (motor shaft or
    gear output) and the corner (hot, worst-case supply); units are chosen by
    magnitude within the preset (400 N·m, not 400 000 mN·m).  Points where the
    load drives the motor (negative torque after mirroring) are drawn as hollow
    triangles and explained in the legend.

    Each drawn element carries a ``gid`` (``hot``, ``cold``, ``continuous``,
    ``peak``, ``max_speed``, ``gear_max_speed``, ``segment-<i>``, ``rms``) so
    that its data can be read back (``Line2D.get_xydata``), in display units.
    """
    import numpy as np

    ch = characteristics(model, cond)

    def si(t, w):
        ts, ws = to_side(t, w, model, side)
        return np.asarray(ts, dtype=float), np.asarray(ws, dtype=float)

    mirrored = [mirror(p) for p in points]
    t_low = min([0.0] + [m[1] for m in mirrored])
    lines = {}
    for key in ("hot", "cold"):
        c = ch[key]
        if math.isfinite(c["stall_torque"]) and math.isfinite(c["no_load_speed"]) and c["stall_torque"] > 0:
            ts = np.array(([t_low * 1.15] if t_low < 0 else []) + [0.0, c["stall_torque"]])
            ws = c["no_load_speed"] - ts * c["no_load_speed"] / c["stall_torque"]
            lines[key] = si(ts, ws)
    pts = [(p, *si([t, t], [w0, w1])) for p, (d, t, w0, w1) in zip(points, mirrored)]
    rms_pt = rms_point(points)
    rms_si = si([rms_pt[0]], [rms_pt[1]]) if rms_pt is not None else None
    vkeys = ("continuous_torque", "peak_torque", "gear_continuous_torque", "gear_peak_torque")
    vert = {k: float(si([ch[k]], [0.0])[0][0]) if math.isfinite(ch[k]) else math.nan for k in vkeys}
    back = {k: float(si([ch[k + "_back"]], [1.0])[0][0]) if math.isfinite(ch[k + "_back"]) else math.nan
            for k in ("continuous_torque", "peak_torque")}
    horiz = {k: float(si([0.0], [ch[k]])[1][0]) if math.isfinite(ch[k]) else math.nan
             for k in ("max_speed", "gear_max_speed")}
    stalls = [float(lines[k][0][-1]) for k in lines]
    xs = [float(v) for _, x, _ in pts for v in x] + ([float(rms_si[0][0])] if rms_si is not None else [])
    ys = [float(v) for _, _, y in pts for v in y] + ([float(rms_si[1][0])] if rms_si is not None else [])

    def hot_at(x):
        if "hot" not in lines:
            return np.full(np.shape(x), np.nan)
        lx, ly = lines["hot"]
        return np.interp(x, lx, ly, left=np.nan, right=np.nan)

    speeds = [v for v in horiz.values()] + [float(np.max(lines[k][1])) for k in lines]
    if "cold" in lines and xs:
        speeds.append(float(np.nanmax(np.interp(xs, *lines["cold"]))))
    x_min, x_max, y_max = _extent(xs, ys, list(vert.values()) + list(back.values()), stalls, hot_at, speeds)
    _drawable(None, title or model.label, x_min, x_max, y_max)
    if x_min < 0:           # the lines reach the left edge (where the load drives the motor)
        left = _motor_torque(x_min, model, side)
        for key in lines:
            c = ch[key]
            ts = np.array([left, 0.0, c["stall_torque"]])
            lines[key] = si(ts, c["no_load_speed"] - ts * c["no_load_speed"] / c["stall_torque"])

    # units by magnitude, then everything in display units
    tl, wl, dt, dw = _display_axes(x_min, x_max, y_max, units)
    X0, X1, Y1 = float(dt(x_min)), float(dt(x_max)), float(dw(y_max))
    fig = _figure(8.0, 6.0)
    ax = fig.add_subplot(1, 1, 1)
    _style(ax)
    ax.set_xlim(X0, X1)
    ax.set_ylim(0.0, Y1)
    for key, style in (("hot", dict(ls="-", lw=2.4, zorder=3)), ("cold", dict(ls=(0, (6, 3)), lw=1.6, zorder=2))):
        if key not in lines:
            continue
        c = ch[key]
        x, y = dt(lines[key][0]), dw(lines[key][1])
        stall_off = " (off the chart)" if x[-1] > X1 else ""
        if key == "hot":
            label = (f"hot, worst-case supply: {c['voltage']:.3g} V at the motor, winding "
                     f"{temperature_text(c['temperature'], units)} — stall {_num(x[-1])} {tl}{stall_off}, "
                     f"no load {_num(y[-2])} {wl}")
        else:
            label = (f"cold, nominal supply: {c['voltage']:.3g} V at the motor, winding "
                     f"{temperature_text(c['temperature'], units)} — stall {_num(x[-1])} {tl}{stall_off}, "
                     f"no load {_num(y[-2])} {wl}")
        ax.plot(x, y, color=PALETTE[key], gid=key, label=label, solid_capstyle="round", **style)

    def vline(torque, torque_back, key, label, **style):
        if not math.isfinite(torque):
            return
        x = float(dt(torque))
        where = " (off the chart, right)" if x > X1 else ""
        text = label.format(x=_num(x), u=tl) + where
        if torque_back is not None and math.isfinite(torque_back) and X0 < 0 and float(dt(torque_back)) >= X0:
            xb = float(dt(torque_back))
            ax.plot([xb, xb], [0.0, Y1], color=PALETTE[key], gid=f"{key}-back", label="_nolegend_", **style)
            text += f"; {_num(xb)} {tl} back-driven"
        ax.plot([x, x], [0.0, Y1], color=PALETTE[key], gid=key, label=text, **style)

    th_label = (f"continuous limit (thermal, ambient {temperature_text(cond.ambient_temperature, units)}, "
                f"winding ≤ {temperature_text(model.max_winding_temperature, units)}): {{x}} {{u}}")
    vline(vert["continuous_torque"], back["continuous_torque"], "thermal", th_label, lw=2.0, ls=(0, (8, 2, 2, 2)))
    vline(vert["peak_torque"], back["peak_torque"], "peak", f"drive peak current {cond.peak_current:.3g} A: "
          "{x} {u}", lw=1.8, ls=(0, (1.5, 2)))
    vline(vert["gear_continuous_torque"], None, "gear_continuous_torque",
          "gearhead continuous output rating: {x} {u}", lw=1.5, ls=(0, (5, 2)))
    vline(vert["gear_peak_torque"], None, "gear_peak_torque", "gearhead intermittent output rating: {x} {u}",
          lw=1.5, ls=(0, (2, 2)))
    seen = "" if side == "motor" or model.ratio == 1 else f" (÷ {model.ratio:g} at the output)"
    for key, text in (("max_speed", f"motor speed limit{seen}"), ("gear_max_speed", f"gearhead input limit{seen}")):
        if math.isfinite(horiz[key]):
            y = float(dw(horiz[key]))
            where = " (above the chart)" if y > Y1 else ""
            ax.plot([X0, X1], [y, y], color=PALETTE[key], lw=1.2, ls=(0, (4, 3)), gid=key,
                    label=f"{text}: {_num(y)} {wl}{where}")
    shown = [(p, dt(x), dw(y)) for p, x, y in pts]
    lab = _Labeller(ax, (X0, X1), (0.0, Y1))
    for ln in ax.get_lines():
        lab.block_line(*ln.get_data())
    for _, x, y in shown:
        lab.block(x, y)
    if rms_si is not None:
        rx, ry = dt(rms_si[0]), dw(rms_si[1])
        lab.block(rx, ry, 6.5)
    first_fwd = first_back = True
    kinds = {p.kind for p in points}
    for i, (p, x, y) in enumerate(shown):
        hollow = p.kind == "peak"
        ramp = y[0] != y[-1]
        backdriven = x[-1] < 0
        if backdriven:
            label = ("back-driven (▽): the load drives the motor (lowering, braking), torque < 0"
                     if first_back else "_nolegend_")
            first_back = False
            ax.plot(x, y, color=PALETTE["back"], lw=1.6, marker="v", markersize=7, markerfacecolor="white",
                    markeredgewidth=1.6, gid=f"segment-{i}", markevery=[1] if ramp else None, zorder=4,
                    label=label, clip_on=False)
        else:
            label = ("operating points (● continuous, □ peak)" if kinds - {"segment"} else
                     "cycle segments (○ → ● for a speed ramp)") if first_fwd else "_nolegend_"
            first_fwd = False
            ax.plot(x, y, color=PALETTE["point"], lw=1.6, marker="s" if hollow else "o", markersize=6,
                    markerfacecolor="white" if hollow else PALETTE["point"], gid=f"segment-{i}",
                    markevery=[1] if ramp else None, zorder=4, label=label, clip_on=False)
        if ramp:
            ax.plot(x[:1], y[:1], ls="none", marker="o", markersize=4.5,
                    color=PALETTE["back"] if backdriven else PALETTE["point"],
                    markerfacecolor="white", gid=f"segment-{i}-start", label="_nolegend_", zorder=4, clip_on=False)
    for name, x, y in _merged_labels([(p.name, x, y) for p, x, y in shown]):
        lab.place(name, x, y)
    if rms_si is not None:
        ax.plot(rx, ry, ls="none", marker="D", markersize=9, color=PALETTE["rms"], markeredgecolor="black",
                gid="rms", label=f"RMS torque {_num(rx[0])} {tl} at mean speed {_num(ry[0])} {wl}", zorder=5)
    ax.set_xlabel(f"torque {_side_words(model, side)} [{tl}]", fontsize=10, color=PALETTE["text"])
    ax.set_ylabel(f"speed {_side_words(model, side)} [{wl}]", fontsize=10, color=PALETTE["text"])
    ax.set_title(corner_title(title or model.label, model, cond, side, units), loc="left", fontsize=11,
                 fontweight="bold", color=PALETTE["text"], pad=18 if subtitle else 6, linespacing=1.35)
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

    def block_line(self, xs, ys, samples: int = 40, radius_pt: float = 2.0):
        """Mark a drawn line as occupied (sampled along its length, inside the axes)."""
        import numpy as np

        xs, ys = np.asarray(xs, dtype=float), np.asarray(ys, dtype=float)
        if xs.size < 2:
            return
        t = np.linspace(0.0, 1.0, samples)
        seg = np.linspace(0.0, 1.0, xs.size)
        px, py = np.interp(t, seg, xs), np.interp(t, seg, ys)
        (x0, x1), (y0, y1) = self.xlim, self.ylim
        for a, b in zip(px, py):
            if x0 <= a <= x1 and y0 <= b <= y1:
                self.block([a], [b], radius_pt)

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
def plot_comparison(entries, units: str = "metric", side: str = "load", title: str = "", load=None):
    """The hot speed-torque lines, continuous limits and points of several candidates.

    ``entries`` is a list of ``(model, conditions, points)``; each candidate
    gets one colour (line ``hot-<i>``, limit ``continuous-<i>``, points
    ``points-<i>``).  Load side by default: the same load in every candidate.
    ``load`` (with ``side="load"``): the envelope's points at the gear output
    (SI), drawn once in black (``load-<i>``) instead of each candidate's points.
    The axes show the points and the limits near them, as :func:`plot_speed_torque`.
    """
    import numpy as np

    fig = _figure(8.0, 6.0)
    ax = fig.add_subplot(1, 1, 1)
    _style(ax)
    drawn = []          # (i, model, hot line SI, continuous SI, points SI)
    xs, ys = [], []
    for i, (model, cond, points) in enumerate(entries):
        ch = characteristics(model, cond)
        hot = ch["hot"]

        def si(t, w, model=model):
            ts, ws = to_side(t, w, model, side)
            return np.asarray(ts, dtype=float), np.asarray(ws, dtype=float)

        t_low = min([0.0] + [mirror(p)[1] for p in points])
        ts = np.array(([t_low * 1.15] if t_low < 0 else []) + [0.0, hot["stall_torque"]])
        line = si(ts, hot["no_load_speed"] - ts * hot["no_load_speed"] / hot["stall_torque"])
        cont = float(si([ch["continuous_torque"]], [0.0])[0][0]) if math.isfinite(ch["continuous_torque"]) \
            else math.nan
        pts = None
        if points and not (load and side == "load"):
            mir = [mirror(p) for p in points]
            pts = si([m[1] for m in mir] + [m[1] for m in mir], [m[2] for m in mir] + [m[3] for m in mir])
            xs += pts[0].tolist()
            ys += pts[1].tolist()
        drawn.append((i, model, line, cont, pts, hot, si))
    load_si = []
    if load and side == "load":
        for p in load:
            _, t, w0, w1 = mirror(p)
            load_si.append((p, np.array([t, t]), np.array([w0, w1])))
            xs += [t, t]
            ys += [w0, w1]

    def hot_at(x):
        x = np.asarray(x, dtype=float)
        if not drawn:
            return np.full(x.shape, np.nan)
        speeds = np.array([np.interp(x, d[2][0], d[2][1], left=np.nan, right=np.nan) for d in drawn])
        return np.fmax.reduce(speeds, axis=0)   # NaN only where no line reaches (no warning)

    stalls = [float(d[2][0][-1]) for d in drawn]
    speeds = [float(np.max(d[2][1])) for d in drawn]
    x_min, x_max, y_max = _extent(xs, ys, [d[3] for d in drawn], stalls, hot_at, speeds)
    _drawable(fig, title or "the comparison", x_min, x_max, y_max)
    if x_min < 0:           # each hot line reaches the left edge
        for k, (i, model, line, cont, pts, hot, si) in enumerate(drawn):
            ts = np.array([_motor_torque(x_min, model, side), 0.0, hot["stall_torque"]])
            line = si(ts, hot["no_load_speed"] - ts * hot["no_load_speed"] / hot["stall_torque"])
            drawn[k] = (i, model, line, cont, pts, hot, si)
    tl, wl, dt, dw = _display_axes(x_min, x_max, y_max, units)
    X0, X1, Y1 = float(dt(x_min)), float(dt(x_max)), float(dw(y_max))
    for i, model, line, cont, pts, _, _ in drawn:
        colour = _SERIES[i % len(_SERIES)]
        ax.plot(dt(line[0]), dw(line[1]), color=colour, lw=2.2, gid=f"hot-{i}", label=f"{i + 1}. {model.label}")
        if math.isfinite(cont):
            ax.plot([float(dt(cont))] * 2, [0.0, Y1], color=colour, lw=1.4, ls=(0, (6, 2, 2, 2)),
                    gid=f"continuous-{i}", label="_nolegend_")
        if pts is not None:
            ax.plot(dt(pts[0]), dw(pts[1]), ls="none", marker="osD^v"[i % 5], markersize=5.5, color=colour,
                    markeredgecolor="white", markeredgewidth=0.6, alpha=0.9, gid=f"points-{i}",
                    label="_nolegend_", zorder=4)
    lab = _Labeller(ax, (X0, X1), (0.0, Y1))
    for ln in ax.get_lines():
        lab.block_line(*ln.get_data())
    for _, t, w in load_si:
        lab.block(dt(t), dw(w))
    back_shown = False
    for k, (p, t, w) in enumerate(load_si):
        px, py = dt(t), dw(w)
        backdriven = px[-1] < 0
        label = "the load (envelope segments)" if k == 0 else "_nolegend_"
        ax.plot(px, py, color="black", lw=1.4, marker="v" if backdriven else "o", markersize=6 if backdriven else 5,
                markerfacecolor="white", markevery=[1] if w[0] != w[1] else None, gid=f"load-{k}", zorder=5, clip_on=False,
                label=label)
        if backdriven and not back_shown:
            ax.plot([], [], color="black", marker="v", ls="none", markerfacecolor="white",
                    label="back-driven: the load drives the motor (torque < 0)")
            back_shown = True
    for name, x, y in _merged_labels([(p.name, dt(t), dw(w)) for p, t, w in load_si]):
        lab.place(name, x, y)
    ax.set_xlim(X0, X1)
    ax.set_ylim(0.0, Y1)
    direct = all(m.ratio == 1 and m.efficiency == 1 for _, m, *_ in drawn)
    where = "at the motor shaft (direct drive)" if direct else (
        "at the gear output" if side == "load" else "at the motor shaft")
    ax.set_xlabel(f"torque {where} [{tl}]", fontsize=10)
    ax.set_ylabel(f"speed {where} [{wl}]", fontsize=10)
    heading = title or "Shortlist compared"
    ax.set_title(f"{heading}\n{where.removeprefix('at the ')} · hot, worst-case supply · computed winding "
                 "temperature", loc="left", fontsize=11, fontweight="bold", pad=18, linespacing=1.35)
    ax.text(0.0, 1.015, "solid: hot line at the worst-case voltage · dash-dot: continuous (thermal) limit",
            transform=ax.transAxes, fontsize=8.5, color="#555555", va="bottom")
    if ax.get_legend_handles_labels()[0]:
        fig.legend(loc="outside lower center", ncol=2, fontsize=8, frameon=False)
    return fig


def _display_axes(x_min: float, x_max: float, y_max: float, units: str):
    """(torque label, speed label, SI torque → display, SI speed → display): units chosen by the
    magnitude of the axes [SI] in the preset ``units``."""
    import numpy as np

    from ..units import choose_label, parse_unit

    tl = choose_label(max(abs(x_min), abs(x_max)), "torque", units)
    wl = choose_label(y_max, "angular_speed", units)
    tc, wc = parse_unit(tl, "torque"), parse_unit(wl, "angular_speed")

    def dt(t):
        return (np.asarray(t, dtype=float) - tc.offset) / tc.factor

    def dw(w):
        return (np.asarray(w, dtype=float) - wc.offset) / wc.factor

    return tl, wl, dt, dw


def _drawable(fig, what: str, *limits) -> None:
    """Refuse a diagram whose axes would reach beyond floating point (a record with values such as
    1e300 N·m): one clear error instead of matplotlib's."""
    if all(math.isfinite(v) for v in limits):
        return
    import matplotlib.pyplot as plt

    from ..errors import InputError, Problem

    if fig is not None:
        plt.close(fig)
    message = (f"{what}: the diagram would reach beyond floating point (values such as 1e300 in the record), "
               "expected the values of a real motor; check the record with `motorshelf show`")
    raise InputError(message, [Problem("plot", None, None, message)])


def save_figure(fig, path, fmt: str | None = None) -> Path:
    """Save ``fig`` in one of :data:`IMAGE_FORMATS` (from the extension unless ``fmt``); returns the path."""
    path = Path(path)
    fmt = fmt or path.suffix.lower().lstrip(".")
    if fmt not in IMAGE_FORMATS:
        raise ValueError(f"plots are written as {' or '.join('.' + f for f in IMAGE_FORMATS)}, got {path.name!r}")
    import matplotlib

    from ..store.files import output_file

    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": path.stem}), output_file(path) as tmp:
        fig.savefig(tmp, format=fmt, **IMAGE_FORMATS[fmt])
    return path
