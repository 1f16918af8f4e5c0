"""HTML building blocks of the report: escaping, tables, inline SVG, the style sheet.

Everything is inline: no script, no external style sheet, font or image.
"""
from __future__ import annotations

__all__ = ["esc", "table_html", "inline_svg", "STYLE", "fmt_number"]

import html
import math
import re

STYLE = """
:root { --ink:#1d2426; --muted:#5b6669; --line:#d5dcd9; --band:#f3f6f4; --accent:#1f4e5f;
        --warn:#9a5b00; --warn-bg:#fff6e5; --bad:#8f2d1f; }
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; color: var(--ink); background: #fff;
       font: 15px/1.5 system-ui, -apple-system, "Segoe UI", "DejaVu Sans", "Liberation Sans", sans-serif; }
main { max-width: 1120px; margin: 0 auto; padding: 0 28px 48px; }
header.top { border-bottom: 3px solid var(--accent); padding: 22px 0 12px; margin-bottom: 8px; }
header.top h1 { margin: 0; font-size: 26px; letter-spacing: .2px; }
header.top p { margin: 4px 0 0; color: var(--muted); font-size: 13.5px; }
nav.toc { font-size: 13.5px; margin: 10px 0 4px; }
nav.toc a { color: var(--accent); margin-right: 14px; text-decoration: none; border-bottom: 1px dotted; }
a { color: var(--accent); }
h2 { font-size: 20px; margin: 34px 0 10px; padding-bottom: 4px; border-bottom: 1px solid var(--line); }
h3 { font-size: 16px; margin: 22px 0 6px; }
p.lead { color: var(--muted); margin-top: 0; }
.facts { display: flex; flex-wrap: wrap; gap: 10px; margin: 14px 0; padding: 0; list-style: none; }
.facts li { border: 1px solid var(--line); border-radius: 6px; padding: 8px 14px; min-width: 150px; }
.facts b { display: block; font-size: 22px; font-variant-numeric: tabular-nums; }
.facts span { color: var(--muted); font-size: 12.5px; }
.caution { border: 1px solid #e6c48a; border-left: 6px solid var(--warn); background: var(--warn-bg);
           padding: 10px 16px; margin: 18px 0; border-radius: 4px; }
.caution strong { color: var(--warn); }
.scroll { overflow-x: auto; margin: 8px 0 4px; }
table { border-collapse: collapse; font-size: 13px; width: 100%; }
th, td { padding: 4px 8px; border-bottom: 1px solid var(--line); vertical-align: top; text-align: left; }
thead th { background: var(--band); font-weight: 600; border-bottom: 2px solid #aab6b1; vertical-align: bottom; }
thead th.num { white-space: normal; min-width: 4.5em; }
th small { font-weight: 400; color: var(--muted); }
tbody tr:nth-child(even) td { background: #fafbfa; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.id { font-family: ui-monospace, "DejaVu Sans Mono", monospace; font-size: 12.5px; white-space: nowrap; }
td.low { color: var(--bad); font-weight: 600; }
figure { margin: 18px 0 28px; break-inside: avoid; page-break-inside: avoid; }
figure svg { display: block; width: 100%; max-width: 920px; height: auto; }
figcaption { color: var(--muted); font-size: 13px; margin-top: 4px; max-width: 920px; }
.groups { display: grid; grid-template-columns: repeat(auto-fill, minmax(340px, 1fr)); gap: 4px 24px; }
.groups table td:first-child { word-break: break-word; }
.groups h3 { margin: 12px 0 4px; font-size: 14.5px; text-transform: capitalize; }
td small { color: var(--muted); white-space: nowrap; }
.reason { border-left: 3px solid var(--line); padding-left: 14px; margin: 14px 0 22px; }
.reason h3 { margin-top: 0; }
.count { display: inline-block; min-width: 3.2em; font-variant-numeric: tabular-nums; color: var(--bad); }
ul.cautions li { margin: 4px 0; }
footer { color: var(--muted); font-size: 12.5px; border-top: 1px solid var(--line); margin-top: 36px;
         padding-top: 10px; }
@media (max-width: 700px) { main { padding: 0 12px 32px; } .facts li { min-width: 120px; } }
@media print {
  @page { size: A4; margin: 14mm 12mm; }
  body { font-size: 10pt; }
  main { max-width: none; padding: 0; }
  nav.toc { display: none; }
  h2 { break-after: avoid; page-break-after: avoid; }
  h3 { break-after: avoid; page-break-after: avoid; }
  .scroll { overflow: visible; }
  table { font-size: 8.5pt; }
  thead { display: table-header-group; }
  tr { break-inside: avoid; page-break-inside: avoid; }
  figure { break-inside: avoid; page-break-inside: avoid; }
  figure svg { max-width: 100%; max-height: 235mm; }
  .caution, thead th, tbody tr:nth-child(even) td { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  section.plots figure.candidate { break-before: page; page-break-before: always; }
}
"""


def esc(text) -> str:
    return html.escape("" if text is None else str(text), quote=True)


def fmt_number(v, digits: int = 4) -> str:
    """A number for a table cell: about ``digits`` significant digits, no exponent in the usual range."""
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    if isinstance(v, bool):
        return "yes" if v else ""
    if isinstance(v, int):
        return str(v)
    if math.isinf(v):
        return "∞" if v > 0 else "−∞"
    a = abs(v)
    if a >= 10 ** (digits - 1) and a < 1e9:
        return f"{v:.0f}"
    if a != 0 and a < 1e-3:
        return f"{v:.3e}"
    text = f"{v:.{digits}g}"
    return text.replace("-", "−") if text.startswith("-") else text


def table_html(table, columns=None, id_columns=(), low=None, caption: str | None = None) -> str:
    """A :class:`~catalog.export.columns.Table` as an HTML table (units under the names)."""
    cols = [c for c in table.columns if columns is None or c.name in columns]
    if columns is not None:
        order = {name: i for i, name in enumerate(columns)}
        cols.sort(key=lambda c: order[c.name])
    head = []
    for c in cols:
        cls = ' class="num"' if c.is_numeric else ""
        unit = f"<br><small>[{esc(c.unit)}]</small>" if c.is_numeric and c.unit != "1" else ""
        head.append(f"<th{cls} scope=\"col\">{esc(c.name.replace('_', ' '))}{unit}</th>")
    rows = []
    for i in range(len(table)):
        cells = []
        for c in cols:
            v = c.values[i]
            if c.is_numeric:
                bad = low is not None and c.name in low and v is not None and v < low[c.name]
                cells.append(f'<td class="num{" low" if bad else ""}">{esc(fmt_number(v))}</td>')
            elif c.kind == "bool":
                cells.append(f"<td>{'yes' if v else ''}</td>")
            else:
                cls = ' class="id"' if c.name in id_columns else ""
                cells.append(f"<td{cls}>{esc(v)}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    return (f'<div class="scroll"><table>{cap}<thead><tr>{"".join(head)}</tr></thead>'
            f'<tbody>{"".join(rows)}</tbody></table></div>')


_ID = re.compile(r'\bid="([^"]+)"')


def inline_svg(fig, prefix: str, label: str) -> str:
    """``fig`` as an ``<svg>`` element to inline: ids prefixed, no XML prolog or metadata."""
    import io

    import matplotlib

    buf = io.StringIO()
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": prefix}):
        fig.savefig(buf, format="svg", metadata={"Date": None})
    svg = buf.getvalue()
    svg = svg[svg.index("<svg"):]
    svg = re.sub(r"<metadata>.*?</metadata>", "", svg, flags=re.S)
    ids = set(_ID.findall(svg))
    for old in sorted(ids, key=len, reverse=True):
        new = f"{prefix}-{old}"
        svg = svg.replace(f'id="{old}"', f'id="{new}"').replace(f'"#{old}"', f'"#{new}"') \
                 .replace(f"url(#{old})", f"url(#{new})")
    svg = re.sub(r'<svg([^>]*?)\swidth="[^"]*"\s+height="[^"]*"',
                 lambda m: f'<svg{m.group(1)} role="img" aria-label="{esc(label)}"', svg, count=1)
    return svg.strip()
