"""The HTML report: self-contained, rendered by a real headless Chromium, no network."""
from __future__ import annotations

import json
import re
import subprocess
from pathlib import Path

import pytest
from click.testing import CliRunner

from catalog.cli import cli
from catalog.export import CAUTION, write_report

QUERIES = Path(__file__).resolve().parents[2] / "queries"
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         '--host-resolver-rules=MAP * ~NOTFOUND']


@pytest.fixture(scope="module")
def report(wheel, demo_cat, tmp_path_factory) -> Path:
    return write_report(wheel, tmp_path_factory.mktemp("report") / "wheel.html", catalog=demo_cat)


def chromium(need, tmp_path, *args, name="run"):
    exe = need("chromium", "chromium-browser")
    profile = tmp_path / f"profile-{name}"
    return subprocess.run([exe, *FLAGS, f"--user-data-dir={profile}", *map(str, args)],
                          capture_output=True, timeout=180, text=True)


def test_self_contained(report, wheel):
    text = report.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    assert "<script" not in text.lower() and "<link" not in text.lower() and "@import" not in text
    assert not re.search(r"""(?:src|href)\s*=\s*["']?\s*(?:https?:)?//""", text, re.I)
    assert not re.search(r"url\(\s*['\"]?(?:https?:)?//", text, re.I)
    hrefs = re.findall(r'\shref="([^"]*)"', text)
    assert hrefs and all(h.startswith("#") for h in hrefs)
    ids = re.findall(r'\sid="([^"]+)"', text)
    assert len(ids) == len(set(ids)), "ids of the inline SVGs must not collide"
    n = len(wheel.shortlist)
    assert text.count("<svg") == n + 2     # each candidate, the comparison and the duty cycle
    assert "@media print" in text and CAUTION in text


def test_chromium_renders_the_page(report, wheel, need, tmp_path):
    from PIL import Image

    shot = tmp_path / "shot.png"
    r = chromium(need, tmp_path, f"--screenshot={shot}", "--window-size=1280,2000", report.as_uri(), name="shot")
    assert shot.exists(), r.stderr[-2000:]
    assert shot.stat().st_size > 50_000
    with Image.open(shot) as im:
        assert im.size == (1280, 2000)
        lo, hi = im.convert("L").getextrema()
        assert lo < 80 and hi > 240          # text on a light page, not a blank or error screen
    r = chromium(need, tmp_path, "--dump-dom", report.as_uri(), name="dom")
    dom = r.stdout
    assert "Motor selection: drive_wheel" in dom
    short = re.search(r'<section id="shortlist".*?</section>', dom, re.S).group(0)
    rows = re.findall(r"<tr>", short.split("<tbody>", 1)[1])
    assert len(rows) == len(wheel.shortlist)
    for cid in wheel.shortlist["candidate"]:
        assert cid in short
    for i in range(1, len(wheel.shortlist) + 1):
        figure = re.search(rf'<figure id="plot-{i}".*?</figure>', dom, re.S)
        assert figure and "<svg" in figure.group(0) and "<path" in figure.group(0)
    assert re.search(r'<figure id="plot-compare".*?<svg', dom, re.S)
    for key in wheel.reason_counts().index:
        assert f'id="reason-{key}"' in dom


def _page_requests(netlog: Path) -> list[str]:
    """URLs the page asked for (browser-initiated service requests excluded)."""
    text = netlog.read_text(encoding="utf-8").rstrip()
    try:
        doc = json.loads(text)
    except json.JSONDecodeError:         # a log cut short at exit
        doc = json.loads(text.rstrip(",") + "]}")
    names = {v: k for k, v in doc["constants"]["logEventTypes"].items()}
    urls = []
    for e in doc["events"]:
        p = e.get("params", {})
        if names.get(e["type"]) == "URL_REQUEST_START_JOB" and "url" in p and p.get("initiator") != "not an origin":
            urls.append(p.get("url", ""))
    return urls


def test_nothing_reaches_for_the_network(report, need, tmp_path):
    log = tmp_path / "net.json"
    chromium(need, tmp_path, f"--log-net-log={log}", "--dump-dom", report.as_uri(), name="net")
    assert log.exists()
    assert [u for u in _page_requests(log) if not u.startswith(("file:", "data:"))] == []
    # the check itself sees a page that does load something from elsewhere
    bad = tmp_path / "bad.html"
    bad.write_text('<!DOCTYPE html><img src="http://example.invalid/x.png">', encoding="utf-8")
    log2 = tmp_path / "net2.json"
    chromium(need, tmp_path, f"--log-net-log={log2}", "--dump-dom", bad.as_uri(), name="net2")
    assert any("example.invalid" in u for u in _page_requests(log2))


def test_report_cli(demo_db, tmp_path):
    out = tmp_path / "r.html"
    r = CliRunner().invoke(cli, ["--db", str(demo_db), "report", str(QUERIES / "water_pump.toml"), "--out", str(out),
                                 "--units", "imperial", "--plots", "2"], catch_exceptions=False)
    assert r.exit_code == 0, r.output
    text = out.read_text(encoding="utf-8")
    assert text.count('class="candidate"') == 2 and "oz·in" in text
    none = tmp_path / "none.html"
    r = CliRunner().invoke(cli, ["--db", str(demo_db), "report", str(QUERIES / "impossible.toml"), "--out", str(none)])
    assert r.exit_code == 1 and "0 pass" in r.output
    assert "No candidate meets the envelope" in none.read_text(encoding="utf-8")
    r = CliRunner().invoke(cli, ["--db", str(demo_db), "report", str(QUERIES / "water_pump.toml"), "--out",
                                 str(tmp_path / "r.pdf")])
    assert r.exit_code == 2 and "error: --out: " in r.output


def test_plot_cli(demo_db, tmp_path):
    r = CliRunner().invoke(cli, ["--db", str(demo_db), "plot", str(QUERIES / "lift_axis.toml"), "--out",
                                 str(tmp_path / "p"), "--format", "svg", "--top", "2", "--side", "load"])
    assert r.exit_code == 0, r.output
    names = sorted(p.name for p in (tmp_path / "p").iterdir())
    assert len(names) == 3 and "compare.svg" in names
    r = CliRunner().invoke(cli, ["--db", str(demo_db), "plot", str(QUERIES / "lift_axis.toml"), "--out",
                                 str(tmp_path / "q"), "--candidate", "no-such-candidate"])
    assert r.exit_code == 2 and "error: no candidate 'no-such-candidate'" in r.output
