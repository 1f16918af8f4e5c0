"""HTML building blocks of the report: escaping, tables, inline SVG, the style sheet.

Everything is inline: no script, no external style sheet, font or image.
"""
from __future__ import annotations

__all__ = ["esc", "table_html", "inline_svg", "STYLE", "fmt_number", "print_parts", "PRINT_WIDTH_CHARS"]

#: Characters of 8 pt table text across an A4 landscape page (277 mm less cell padding), the
#: width a printed table may take before it is split into parts (each repeating the id columns).
PRINT_WIDTH_CHARS = 150

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
.print-only { display: none; }
p.part { color: var(--muted); font-size: 12px; margin: 10px 0 0; }
@media print {
  @page { size: A4 landscape; margin: 10mm 10mm; }
  body { font-size: 9.5pt; }
  main { max-width: none; padding: 0; }
  nav.toc { display: none; }
  h2 { break-after: avoid; page-break-after: avoid; }
  h3 { break-after: avoid; page-break-after: avoid; }
  .scroll { overflow: visible; }
  .screen-only { display: none; }
  .print-only { display: block; }
  table { font-size: 8pt; width: 100%; table-layout: auto; }
  th, td { padding: 2px 5px; }
  td { overflow-wrap: anywhere; }
  td.id { white-space: nowrap; font-size: 7.5pt; }
  div.part { break-inside: avoid; page-break-inside: avoid; }
  p.part { break-after: avoid; page-break-after: avoid; }
  td.num { white-space: nowrap; }
  thead { display: table-header-group; }
  tr { break-inside: avoid; page-break-inside: avoid; }
  figure { break-inside: avoid; page-break-inside: avoid; }
  figure svg { max-width: 100%; max-height: 150mm; margin: 0 auto; }
  figcaption { max-width: none; }
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


def _shown(c, v) -> str:
    if c.is_numeric:
        return fmt_number(v)
    if c.kind == "bool":
        return "yes" if v else ""
    return "" if v is None else str(v)


def _width(c, n_rows: int) -> int:
    """Characters a column needs when printed: its longest value, its header's longest word, padding."""
    words = (c.title or c.name).replace("_", " ").split() + ([f"[{c.unit}]"] if c.is_numeric else [])
    longest = max([len(_shown(c, c.values[i])) for i in range(min(n_rows, 500))] + [0])
    if c.kind == "text" and longest > 30:
        longest = 30          # long text wraps
    return max([len(w) for w in words] + [longest]) + 2


def print_parts(table, cols, id_columns=(), width: int = PRINT_WIDTH_CHARS) -> list:
    """The columns ``cols`` split into parts that each fit ``width`` characters when printed.

    Every part starts with the id columns (the leading columns named in ``id_columns``
    and any ``rank`` before them), so each printed row says which candidate it is.
    One part when everything fits.
    """
    n = len(table)
    need = {c.name: _width(c, n) for c in cols}
    keys = []
    for c in cols:
        if c.name in id_columns or c.name == "rank":
            keys.append(c)
        else:
            break
    rest = [c for c in cols if c not in keys]
    if sum(need.values()) <= width or not rest:
        return [cols]
    import math

    base = sum(need[c.name] for c in keys)
    room = max(width - base, 1)
    total = sum(need[c.name] for c in rest)
    target = total / math.ceil(total / room)           # as many parts as needed, of even width
    parts, current, used = [], [], 0
    for c in rest:
        if current and (used + need[c.name] > room or used + need[c.name] / 2 > target):
            parts.append(keys + current)
            current, used = [], 0
        current.append(c)
        used += need[c.name]
    if current:
        parts.append(keys + current)
    return parts


def _table(table, cols, id_columns, low, cap) -> str:
    head = []
    for c in cols:
        cls = ' class="num"' if c.is_numeric else ""
        unit = f"<br><small>[{esc(c.unit)}]</small>" if c.is_numeric and c.unit != "1" else ""
        head.append(f"<th{cls} scope=\"col\">{esc((c.title or c.name).replace('_', ' '))}{unit}</th>")
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
    return f'<table>{cap}<thead><tr>{"".join(head)}</tr></thead><tbody>{"".join(rows)}</tbody></table>'


def table_html(table, columns=None, id_columns=(), low=None, caption: str | None = None) -> str:
    """A :class:`~catalog.export.columns.Table` as an HTML table (units under the names).

    On screen the whole table scrolls sideways; in print a table too wide for an
    A4 landscape page is printed as parts (:func:`print_parts`), each repeating the
    id columns, so that every column of every row is on paper.
    """
    cols = [c for c in table.columns if columns is None or c.name in columns]
    if columns is not None:
        order = {name: i for i, name in enumerate(columns)}
        cols.sort(key=lambda c: order[c.name])
    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    parts = print_parts(table, cols, id_columns)
    whole = f'<div class="scroll">{_table(table, cols, id_columns, low, cap)}</div>'
    if len(parts) == 1:
        return whole
    printed = "".join(f'<div class="part"><p class="part">part {k} of {len(parts)}</p>'
                      + _table(table, part, id_columns, low, cap) + "</div>" for k, part in enumerate(parts, start=1))
    return f'<div class="screen-only">{whole}</div><div class="print-only">{printed}</div>'



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
