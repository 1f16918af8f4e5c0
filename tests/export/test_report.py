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
    screen = short.split('<div class="print-only">')[0]      # the table on screen (print has it in parts)
    rows = re.findall(r"<tr>", screen.split("<tbody>", 1)[1])
    assert len(rows) == len(wheel.shortlist)
    for cid in wheel.shortlist["candidate"]:
        assert cid in short
    for i in range(1, len(wheel.shortlist) + 1):
        figure = re.search(rf'<figure id="plot-{i}".*?</figure>', dom, re.S)
        assert figure and "<svg" in figure.group(0) and "<path" in figure.group(0)
    assert re.search(r'<figure id="plot-compare".*?<svg', dom, re.S)
    for key in wheel.reason_counts().index:
        assert f'id="reason-{key}"' in dom


def _words(pdf: Path, need) -> list:
    """Pages of ``pdf`` as (width, height, [(x0, y0, x1, y1, word)]) by ``pdftotext -bbox``."""
    import html as _html

    exe = need("pdftotext")
    out = subprocess.run([exe, "-bbox", str(pdf), "-"], capture_output=True, text=True, check=True).stdout
    pages = []
    for m in re.finditer(r'<page width="([\d.]+)" height="([\d.]+)">(.*?)</page>', out, re.S):
        words = [(float(a), float(b), float(c), float(d), _html.unescape(w)) for a, b, c, d, w in re.findall(
            r'<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">(.*?)</word>', m.group(3))]
        pages.append((float(m.group(1)), float(m.group(2)), words))
    return pages


def _printed_whole(header_words, pages) -> bool:
    """True when the words of one header are printed together on a page: each next word on the
    same line just right of the last, or on the next line below it (a header wrapped in its cell)."""
    for width, height, words in pages:
        starts = [w for w in words if w[4] == header_words[0]]
        for first in starts:
            chain, ok = first, True
            for nxt in header_words[1:]:
                h = chain[3] - chain[1]
                cand = [w for w in words if w[4] == nxt and (
                    (abs(w[1] - chain[1]) < 0.5 * h and 0 <= w[0] - chain[2] < 2.5 * h) or
                    (0 < w[1] - chain[1] < 2.2 * h and w[0] < chain[2] + 2 * h and w[2] > chain[0] - 2 * h))]
                if not cand:
                    ok = False
                    break
                chain = cand[0]
            if ok and chain[2] <= width and first[0] >= 0:
                return True
    return False


@pytest.mark.parametrize("envelope", ["drive_wheel", "lift_axis"])
def test_prints_whole_on_a4_landscape(demo_cat, need, tmp_path, envelope):
    """Chromium's A4 print: every column header and every candidate of the shortlist is on paper."""
    from catalog.export.report import REPORT_COLUMNS, render_report
    from catalog.export.selection import selection_tables

    sel = demo_cat.select(QUERIES / f"{envelope}.toml")
    html_path = tmp_path / f"{envelope}.html"
    html_path.write_text(render_report(sel, catalog=demo_cat), encoding="utf-8")
    pdf = tmp_path / f"{envelope}.pdf"
    r = chromium(need, tmp_path, "--no-pdf-header-footer", f"--print-to-pdf={pdf}", html_path.as_uri(), name="pdf")
    assert pdf.exists(), r.stderr[-2000:]
    pages = _words(pdf, need)
    assert pages and all(w > h for w, h, _ in pages)              # landscape pages
    assert all(abs(w - 841.9) < 2 and abs(h - 595.0) < 2 for w, h, _ in pages)   # A4: 297 × 210 mm
    for width, _, words in pages:                                  # nothing runs off the right edge
        assert all(x1 <= width + 0.5 for _, _, x1, _, _ in words)
    short = {t.name: t for t in selection_tables(sel, "metric", demo_cat)}["shortlist"]
    shown = [c for c in short.columns if c.name in REPORT_COLUMNS or c.name.startswith("price_")]
    assert len(shown) >= 17
    for c in shown:
        words = (c.title or c.name).replace("_", " ").split() + ([f"[{c.unit}]"] if c.is_numeric and
                                                                   c.unit != "1" else [])
        assert _printed_whole(words, pages), f"column header {' '.join(words)!r} is not printed whole"
    text = " ".join(w[4] for _, _, words in pages for w in words)
    n_parts = max(1, len(re.findall(r"part \d+ of (\d+)", text)) and int(re.findall(r"part \d+ of (\d+)",
                                                                                      text)[0]))
    for cid in sel.shortlist["candidate"]:
        # in every part of the shortlist, and in its diagram's title
        assert text.count(cid) >= n_parts + 1, cid
    # what the browser cut off before: the columns after the winding temperature
    assert _printed_whole(["energy", "per", "cycle", "[J]"], pages)


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
