"""The duty cycle in the HTML report (the table `motorshelf cycle` prints and a plot of one cycle) and the
sources of each segment in `select --explain`."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from catalog.export.cycle import cycle_frame, plot_cycle

QUERIES = Path(__file__).resolve().parents[2] / "queries"


def test_plot_draws_every_segment_over_its_time(demo_cat):
    cyc = demo_cat.cycle(QUERIES / "screw_stage.toml")
    fig = plot_cycle(cyc, "si")
    speed = next(line for ax in fig.axes for line in ax.get_lines() if line.get_gid() == "speed")
    torque = next(line for ax in fig.axes for line in ax.get_lines() if line.get_gid() == "torque")
    t_end = np.cumsum(cyc.duration)
    x, y = speed.get_data()
    # two points per segment: (start, speed_start), (end, speed_end); SI preset: rad/s
    np.testing.assert_allclose(x[1::2], t_end, rtol=1e-12)
    np.testing.assert_allclose(y[0::2], cyc.speed_start, rtol=1e-12)
    np.testing.assert_allclose(y[1::2], cyc.speed_end, rtol=1e-12)
    np.testing.assert_allclose(torque.get_data()[1][0::2], cyc.torque, rtol=1e-12)
    labels = {t.get_text() for ax in fig.axes for t in ax.texts}
    assert {"extend", "scan", "return"} <= labels     # the moves, named over their spans
    assert plot_cycle(demo_cat.cycle(QUERIES / "impossible.toml")) is None   # operating points: no time


def test_report_shows_the_cycle_table_and_plot(demo_cat, tmp_path):
    out = tmp_path / "r.html"
    demo_cat.report(QUERIES / "screw_stage.toml", out)
    html = out.read_text(encoding="utf-8")
    assert 'id="cycle"' in html and 'id="plot-cycle"' in html
    cyc = demo_cat.cycle(QUERIES / "screw_stage.toml")
    section = html[html.index('id="cycle"'):html.index('id="shortlist"')]
    frame = cycle_frame(cyc, "datasheet")
    for name, key in zip(frame["segment"], frame["from"]):
        assert f"<td>{name}</td><td>{key}</td>" in section
    assert "Mechanism screw: lead 10 mm" in section
    assert "<svg" in section


def test_explain_names_mechanism_and_move_and_keeps_long_names(demo_cat, tmp_path):
    text = (QUERIES / "screw_stage.toml").read_text(encoding="utf-8")
    long_name = "extend to the far end of the measuring stroke"
    text = text.replace('name = "extend"', f'name = "{long_name}"', 1)
    env = tmp_path / "long.toml"
    env.write_text(text, encoding="utf-8")
    sel = demo_cat.select(env)
    out = sel.explain(sel.table["candidate"].iloc[0])
    assert f"  {long_name} accel " in out
    assert f"from move '{long_name}' (motion.moves[0]), accel, through the screw" in out
    assert "mechanism screw: lead 10 mm" in out
    # the columns stay aligned: every segment row has the time at the same place
    rows = [line for line in out.splitlines() if line.startswith(f"  {long_name} ")]
    assert len({line.index(" 0.") for line in rows if " 0." in line}) <= 2
