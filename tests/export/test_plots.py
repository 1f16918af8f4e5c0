"""Speed-torque diagrams: the drawn data equals the computed physics.

Physics checked against a textbook chapter on DC machines (speed-torque line
ω = (V − R·(T + Tf)/Kt)/Ke, stall torque Ts = Kt·(V/R − I0), no-load speed
ω0 = (V − R·I0)/Ke), IEC 60028 for the copper resistance line
R(T) = R20·(1 + 0.00393/K·(T − 20 °C)) and the two-node thermal network for the
continuous current I = √((Tmax − Ta)/((Rth1 + Rth2)·R(Tmax))).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from catalog import physics as ph
from catalog.export.lines import Conditions, MotorModel, OperatingPoint
from catalog.export.plots import plot_comparison, plot_speed_torque, save_figure

RPM = 30.0 / math.pi


def lines_of(fig) -> dict:
    return {ln.get_gid(): ln for ax in fig.axes for ln in ax.get_lines() if ln.get_gid()}


def crossing(line):
    """(torque where speed = 0, speed where torque = 0) of a straight Line2D, by interpolation."""
    x, y = (np.asarray(v, dtype=float) for v in line.get_data())
    order = np.argsort(x)
    at_zero_torque = float(np.interp(0.0, x[order], y[order]))
    order = np.argsort(y)
    at_zero_speed = float(np.interp(0.0, y[order], x[order]))
    return at_zero_speed, at_zero_torque


@pytest.fixture
def record():
    """A plain 24 V motor record (SI), resistance stated at 20 °C, magnet β = −0.1 %/K."""
    return {"id": "test-m1", "terminal_resistance": 2.0, "torque_constant": 0.05, "back_emf_constant": 0.05,
            "no_load_current": 0.1, "resistance_reference_temperature": 293.15,
            "max_winding_temperature": 428.15, "thermal_resistance_winding_housing": 4.0,
            "thermal_resistance_housing_ambient": 10.0, "max_speed": 600.0}


def test_plain_record_lines_cross_axes_at_stall_and_no_load(record):
    model = MotorModel.from_record(record, magnet_coefficient=-0.001)
    cond = Conditions(voltage=21.0, nominal_voltage=24.0, ambient_temperature=298.15,
                      winding_temperature=373.15, peak_current=8.0)
    points = [OperatingPoint("run", 0.2, 250.0, duration=10.0), OperatingPoint("accelerate", 0.4, 0.0, 250.0, 1.0)]
    fig = plot_speed_torque(model, cond, points, units="si")
    got = lines_of(fig)
    # hot: 21 V, winding 100 °C; by hand (IEC 60028 copper line, textbook line)
    r_hot = 2.0 * (1 + 0.00393 * (373.15 - 293.15))
    kt_hot = 0.05 * (1 - 0.001 * (373.15 - 293.15))
    i0 = 0.05 * 0.1 / kt_hot                         # friction torque stays Kt·I0 at the reference
    stall, no_load = crossing(got["hot"])
    assert stall == pytest.approx(kt_hot * (21.0 / r_hot - i0), rel=1e-9)
    assert no_load == pytest.approx((21.0 - r_hot * i0) / kt_hot, rel=1e-9)
    # the same from catalog.physics functions
    assert stall == pytest.approx(ph.stall_torque(kt_hot, ph.stall_current(21.0, r_hot), i0), rel=1e-12)
    assert no_load == pytest.approx(ph.speed_at_torque(0.0, 21.0, r_hot, kt_hot, kt_hot, i0), rel=1e-12)
    # cold: 24 V, winding at the 25 °C ambient
    r_cold = ph.resistance_at_temperature(2.0, 298.15, 293.15)
    kt_cold = ph.torque_constant_at_temperature(0.05, 298.15, -0.001, 293.15)
    stall_c, no_load_c = crossing(got["cold"])
    assert stall_c == pytest.approx(ph.stall_torque(kt_cold, 24.0 / r_cold, 0.005 / kt_cold), rel=1e-12)
    assert no_load_c == pytest.approx(ph.no_load_speed(24.0, r_cold, 0.005 / kt_cold, kt_cold), rel=1e-12)
    # continuous limit: vertical, at Kt(Tmax)·Icont − Tf (two-node network, copper loss only)
    x, y = got["thermal"].get_data()
    assert x[0] == x[1] and y[0] == 0
    r_max = 2.0 * (1 + 0.00393 * (428.15 - 293.15))
    i_cont = math.sqrt((428.15 - 298.15) / (14.0 * r_max))
    assert x[0] == pytest.approx(0.05 * (1 - 0.001 * 135.0) * i_cont - 0.005, rel=1e-9)
    # peak current (hot Kt) and speed limit
    assert got["peak"].get_data()[0][0] == pytest.approx(kt_hot * 8.0 - 0.005, rel=1e-12)
    assert set(got["max_speed"].get_data()[1]) == {600.0}
    # the points as given, RMS torque at the mean speed
    assert got["segment-0"].get_xydata().tolist() == [[0.2, 250.0], [0.2, 250.0]]
    assert got["segment-1"].get_xydata().tolist() == [[0.4, 0.0], [0.4, 250.0]]
    rx, ry = got["rms"].get_data()
    assert rx[0] == pytest.approx(math.sqrt((0.2 ** 2 * 10 + 0.4 ** 2 * 1) / 11))
    assert ry[0] == pytest.approx((250.0 * 10 + 125.0 * 1) / 11)


def test_display_units_and_load_side(record):
    model = MotorModel.from_record(record)
    model.ratio, model.efficiency = 10.0, 0.8
    cond = Conditions(voltage=24.0, nominal_voltage=24.0, winding_temperature=298.15)
    pts = [OperatingPoint("lift", 0.1, 300.0), OperatingPoint("lower", -0.05, -200.0), OperatingPoint("brake", -0.1, 200.0)]
    motor = lines_of(plot_speed_torque(model, cond, pts, units="datasheet", side="motor"))
    load = lines_of(plot_speed_torque(model, cond, pts, units="datasheet", side="load"))
    stall_m, nl_m = crossing(motor["hot"])
    stall_l, nl_l = crossing(load["hot"])
    assert stall_l == pytest.approx(stall_m * 10 * 0.8) and nl_l == pytest.approx(nl_m / 10)
    assert motor["segment-0"].get_xydata()[0].tolist() == pytest.approx([100.0, 300.0 * RPM])   # mN·m, rpm
    # running backwards while motoring mirrors into the first quadrant; braking shows negative torque
    assert motor["segment-1"].get_xydata()[0].tolist() == pytest.approx([50.0, 200.0 * RPM])
    assert load["segment-1"].get_xydata()[0].tolist() == pytest.approx([50.0 * 8.0, 20.0 * RPM])
    assert load["segment-2"].get_xydata()[0].tolist() == pytest.approx([-100.0 * 10 / 0.8, 20.0 * RPM])


def test_candidate_diagram_matches_the_selection(wheel, demo_cat):
    """The drawn segments are the selection's own operating points (evaluate(detail=True))."""
    from catalog.export.detail import candidate_detail
    from catalog.export.figures import candidate_figure
    from catalog.select.candidates import build_candidates
    from catalog.select.evaluate import at_corners

    cid = wheel.shortlist["candidate"].iloc[0]
    row = wheel.shortlist.iloc[0]
    fig = candidate_figure(wheel, cid, demo_cat, units="si")
    got = lines_of(fig)
    env = wheel.envelope
    cand = build_candidates(demo_cat.motors(), demo_cat.gearheads(), env)
    i = list(cand["id"]).index(cid)
    d = at_corners(env, {k: v[i:i + 1] for k, v in cand.items()}, detail=True)
    for s in range(len(env.names)):
        torque = d["seg_motor_torque"][0, s]
        w0, w1 = d["seg_speed_start"][0, s], d["seg_speed_end"][0, s]
        sign = 1.0 if (w0 or w1) >= 0 else -1.0
        np.testing.assert_allclose(got[f"segment-{s}"].get_xydata(),
                                   [[torque * sign, w0 * sign], [torque * sign, w1 * sign]], rtol=1e-12, atol=1e-12)
    # hot line at the worst-case voltage and the selection's winding temperature
    detail = candidate_detail(wheel, cid, demo_cat)
    assert detail.winding_temperature == pytest.approx(row["winding_temperature"])
    c = {k: v[i] for k, v in cand.items()}
    # drive_wheel's tolerance is signed (one corner for every check): Kt = Ke × 0.95, R × 1.07
    assert env.tolerance == {"torque_constant": (-0.05, -0.05), "terminal_resistance": (0.07, 0.07)}
    c.update(terminal_resistance=c["terminal_resistance"] * 1.07, torque_constant=c["torque_constant"] * 0.95,
             back_emf_constant=c["back_emf_constant"] * 0.95)
    tw = row["winding_temperature"]
    r = ph.resistance_at_temperature(c["terminal_resistance"], tw, c["resistance_reference_temperature"])
    kt = ph.torque_constant_at_temperature(c["torque_constant"], tw, c["magnet_coefficient"], c["resistance_reference_temperature"])
    ke = ph.torque_constant_at_temperature(c["back_emf_constant"], tw, c["magnet_coefficient"], c["resistance_reference_temperature"])
    v = env.min_voltage - env.drive_voltage_drop
    stall, no_load = crossing(got["hot"])
    assert no_load == pytest.approx(ph.speed_at_torque(0.0, v, r, kt, ke, c["friction_torque"] / kt), rel=1e-9)
    assert stall == pytest.approx(ph.torque_at_speed(0.0, v, r, kt, ke, c["friction_torque"] / kt), rel=1e-9)


def test_comparison_and_files(wheel, demo_cat, tmp_path):
    from PIL import Image

    from catalog.export.figures import comparison_figure, write_plots

    fig = comparison_figure(wheel, catalog=demo_cat, top=3)
    got = lines_of(fig)
    assert {"hot-0", "hot-1", "hot-2"} <= set(got) and "load-0" in got
    env = wheel.envelope
    x, y = got["load-2"].get_data()           # load side: the envelope's own segment (speed in rpm)
    assert y[0] == pytest.approx(abs(env.speed_start[2]) * RPM)
    paths = write_plots(wheel, tmp_path / "plots", demo_cat, candidates=list(wheel.shortlist["candidate"][:2]))
    assert [p.name for p in paths][-1] == "compare.png" and len(paths) == 3
    for p in paths:
        with Image.open(p) as im:
            assert im.size[0] > 800 and im.size[1] > 500
    svg = save_figure(plot_comparison([]), tmp_path / "empty.svg").read_text(encoding="utf-8")
    assert svg.lstrip().startswith("<?xml") and "<svg" in svg


# -- what a person sees: axes, titles, labels -----------------------------------------------------
def texts_of(fig):
    return [t for ax in fig.axes for t in ax.texts]


def no_overlaps(fig):
    """Every point label inside the figure and clear of every other label (in drawn pixels)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    boxes = [t.get_window_extent(renderer) for t in fig.axes[0].texts if t.get_text()
             and hasattr(t, "xyann")]
    fw, fh = fig.bbox.width, fig.bbox.height
    for b in boxes:
        assert b.x0 >= 0 and b.y0 >= 0 and b.x1 <= fw and b.y1 <= fh
    for i, a in enumerate(boxes):
        for b in boxes[i + 1:]:
            assert not a.overlaps(b), (a, b)
    return len(boxes)


@pytest.mark.parametrize("envelope", ["drive_wheel", "lift_axis", "camera_pan", "water_pump"])
@pytest.mark.parametrize("side", ["motor", "load"])
def test_demo_diagrams_scale_to_the_points(demo_cat, envelope, side):
    from catalog.export.detail import candidate_detail
    from catalog.export.figures import candidate_figure
    from tests.export.conftest import QUERIES

    sel = demo_cat.select(QUERIES / f"{envelope}.toml")
    cid = sel.shortlist["candidate"].iloc[0]
    fig = candidate_figure(sel, cid, demo_cat, side=side)
    ax = fig.axes[0]
    got = lines_of(fig)
    x0, x1 = ax.get_xlim()
    _, y1 = ax.get_ylim()
    seg = np.vstack([got[g].get_xydata() for g in got if g.startswith("segment-") and g.count("-") == 1])
    # every operating point inside the axes, and they fill a good part of them
    assert seg[:, 0].min() >= x0 and seg[:, 0].max() <= x1 and seg[:, 1].max() <= y1
    assert (seg[:, 0].max() - min(seg[:, 0].min(), 0.0)) >= 0.4 * (x1 - x0)
    assert seg[:, 1].max() >= 0.3 * y1
    # the hot line is inside the axes above every point (the voltage margin can be seen)
    hx, hy = got["hot"].get_data()
    order = np.argsort(hx)
    above = np.interp(seg[:, 0], np.asarray(hx)[order], np.asarray(hy)[order])
    assert np.all(above <= y1) and np.all(above >= seg[:, 1] - 1e-9)
    # a limit beyond the axes is named in the legend, not drawn squeezed
    labels = {ln.get_gid(): ln.get_label() for ln in ax.get_lines() if ln.get_gid()}
    for gid in ("peak", "thermal"):
        if gid in got and got[gid].get_xdata()[0] > x1:
            assert "(off the chart" in labels[gid]
    d = candidate_detail(sel, cid, demo_cat)
    stall_x = crossing(got["hot"])[0]
    if stall_x > x1:
        assert "(off the chart)" in labels["hot"]
    # the title states the side and the corner
    title = ax.get_title(loc="left")
    geared = d.model.ratio != 1 or d.model.efficiency != 1
    side_words = "gear output" if side == "load" and geared else "motor shaft"
    assert side_words in title.splitlines()[1] and "hot, worst-case supply" in title
    # back-driven points explained in the legend exactly when there are some
    back = any(got[g].get_xdata()[-1] < 0 for g in got if g.startswith("segment-") and g.count("-") == 1)
    legend = " ".join(t.get_text() for t in fig.legends[0].get_texts())
    assert ("back-driven" in legend) == back
    assert no_overlaps(fig) >= 1


def test_units_by_magnitude_and_stall_region_only_where_it_fits(record):
    model = MotorModel.from_record(record)
    model.ratio, model.efficiency = 400.0, 0.7
    cond = Conditions(voltage=24.0, nominal_voltage=24.0, winding_temperature=350.0)
    # 0.1 N·m on the motor shaft through 400:1 at 70 %: 28 N·m at the output, not 28 000 mN·m
    fig = plot_speed_torque(model, cond, [OperatingPoint("lift", 0.1, 300.0)], units="metric", side="load")
    assert fig.axes[0].get_xlabel().endswith("[N·m]")
    x = lines_of(fig)["segment-0"].get_xdata()[0]
    assert x == pytest.approx(0.1 * 400 * 0.7)
    # the point at 0.1 N·m of a motor stalling at ~0.55 N·m: the stall lies outside the axes
    x1 = fig.axes[0].get_xlim()[1]
    assert crossing(lines_of(fig)["hot"])[0] > x1 and x1 < 3 * x
    near = plot_speed_torque(model, cond, [OperatingPoint("lift", 0.4, 30.0)], units="metric", side="motor")
    assert crossing(lines_of(near)["hot"])[0] < near.axes[0].get_xlim()[1]      # close enough: shown


def test_points_on_one_spot_share_one_label(record):
    model = MotorModel.from_record(record)
    cond = Conditions(voltage=24.0, nominal_voltage=24.0, winding_temperature=350.0)
    pts = [OperatingPoint("glide left", 0.1, 200.0), OperatingPoint("glide right", 0.1, 200.0),
           OperatingPoint("brake", -0.05, 100.0)]
    fig = plot_speed_torque(model, cond, pts, units="si")
    names = [t.get_text() for t in texts_of(fig) if hasattr(t, "xyann")]
    assert "glide left / glide right" in names and "brake" in names
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert any(t.startswith("back-driven (▽): the load drives the motor") for t in legend)
    assert no_overlaps(fig) == 2
