"""The selection report: one self-contained HTML file.

Sections: summary and caution, the envelope as given, the ranked shortlist,
the speed-torque diagrams (a comparison of the top few, then one per
shortlisted candidate, inline SVG), one section per rejection reason with
its count and examples, the provenance of the values the checks used, and
the cautions.  No script, no external style sheet, font or image: the file
opens offline and prints whole on A4 landscape pages (print style sheet: one
diagram per page, tables too wide for the page printed in parts that each
repeat the candidate column).
"""
from __future__ import annotations

__all__ = ["write_report", "render_report", "REPORT_COLUMNS", "USED_FIELDS"]

from pathlib import Path

from .html import STYLE, esc, fmt_number, inline_svg, table_html

#: Shortlist columns shown in the report (the XLSX has them all).
REPORT_COLUMNS = ["rank", "candidate", "ratio", "worst_segment", "smallest_margin", "voltage_margin",
                  "peak_current_margin", "rms_current_margin", "temperature_margin", "motor_speed_margin",
                  "gear_peak_torque_margin", "winding_temperature", "rms_current", "peak_current",
                  "energy_per_cycle", "mass", "price", "currency", "pareto", "available", "location"]
#: Fields of the records whose provenance the report lists (those the checks read).
USED_FIELDS = {
    "motor": ["terminal_resistance", "resistance_reference_temperature", "torque_constant", "back_emf_constant",
              "speed_constant", "no_load_current", "friction_torque", "rotor_inertia", "magnet_material",
              "thermal_resistance_winding_housing", "thermal_resistance_housing_ambient",
              "thermal_time_constant_winding", "thermal_time_constant_motor", "max_winding_temperature",
              "max_speed", "no_load_speed", "commutation", "mount", "mass", "length", "diameter", "price",
              "currency"],
    "gearhead": ["ratio", "efficiency", "inertia", "max_continuous_torque", "max_intermittent_torque",
                 "max_input_speed", "mount", "mass", "length", "diameter", "price", "currency"],
}
_EXAMPLES = 8


def _envelope(selection, units: str) -> str:
    """The envelope: one small table per group, the segments (or points) as one table."""
    from ..select.envelope import envelope_schema
    from .selection import envelope_leaves, envelope_table, key_text

    env = selection.envelope
    table = envelope_table(env, units)
    shown = dict(zip(table.column("key").values, zip(table.column("as given").values,
                                                     table.column("value").values, table.column("unit").values,
                                                     table.column("meaning").values)))
    groups, out = {}, []
    for path, _, _ in envelope_leaves(env.raw, envelope_schema(env.raw), []):
        key = key_text(path)
        if path[0] in ("name", "description"):
            continue
        if path[0] in ("cycle", "points") and any(isinstance(p, int) for p in path):
            continue
        groups.setdefault(path[0], []).append((key_text(path[1:]) or path[0], key))
    for group, keys in groups.items():
        rows = "".join(
            f'<tr><td title="{esc(shown[k][3])}">{esc(name)}</td><td>{esc(shown[k][0])}</td>'
            f'<td class="num">{esc(fmt_number(shown[k][1]) if shown[k][1] is not None else "")}</td>'
            f"<td>{esc(shown[k][2] if shown[k][2] not in (None, '1') else '')}</td></tr>" for name, k in keys)
        out.append(f'<div class="group"><h3>{esc(group)}</h3><table><thead><tr><th>input</th><th>as given</th>'
                   f'<th class="num">value</th><th>unit</th></tr></thead><tbody>{rows}</tbody></table></div>')
    seg_key = "points" if env.mode == "points" else "cycle"
    items = env.raw.get("points") if env.mode == "points" else env.raw.get("cycle", {}).get("segments", [])
    cols = ["name", "kind", "duration", "torque", "speed", "speed_start", "speed_end"]
    cols = [c for c in cols if any(c in it for it in items)]
    head = "".join(f"<th>{esc(c.replace('_', ' '))}</th>" for c in cols)
    body = []
    for i, it in enumerate(items):
        cells = []
        for c in cols:
            path = f"{seg_key}[{i}].{c}" if env.mode == "points" else f"cycle.segments[{i}].{c}"
            given, value, unit, _ = shown.get(path, (it.get(c, ""), None, None, ""))
            extra = f' <small>= {esc(fmt_number(value))} {esc(unit)}</small>' if value is not None and \
                str(given).replace(" ", "") != f"{fmt_number(value)}{unit}".replace("−", "-") else ""
            cells.append(f"<td>{esc(given if c in it else '')}{extra if c in it else ''}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    title = "Operating points" if env.mode == "points" else (
        "Duty cycle" + (" (repeated)" if env.repeat else " (one pass from cold)"))
    return ('<div class="groups">' + "".join(out) + "</div>"
            + f'<h3>{title}</h3><div class="scroll"><table><thead><tr>{head}</tr></thead>'
            + f"<tbody>{''.join(body)}</tbody></table></div>")


def _facts(selection) -> str:
    n_pass, n_rej = selection.counts
    items = [(n_pass + n_rej, "candidates evaluated"), (n_pass, "meet the envelope"),
             (len(selection.shortlist), "on the shortlist"), (n_rej, "rejected")]
    return '<ul class="facts">' + "".join(f"<li><b>{v}</b><span>{esc(t)}</span></li>" for v, t in items) + "</ul>"


def _shortlist(selection, tables) -> str:
    short = tables["shortlist"]
    if not len(short):
        return "<p><strong>No candidate meets the envelope.</strong> The rejection reasons below say why.</p>"
    req = selection.envelope.margins
    low = {"smallest_margin": 0.0}
    names = [col.name for col in short.columns]
    cols = [n for c in REPORT_COLUMNS for n in names if n == c or (c == "price" and n.startswith("price_"))]
    keys = ", ".join(selection.envelope.rank_keys)
    return (f'<p class="lead">Ranked by {esc(keys)}. Margins are the headroom to each limit '
            f"(required: voltage {req['voltage']:.0%}, current {req['current']:.0%}, gearhead torque "
            f"{req['torque']:.0%}, speed {req['speed']:.0%}, temperature {req['temperature']:.3g} K). "
            "Every column of every candidate is in the spreadsheet export.</p>"
            + table_html(short, cols, id_columns=("candidate",), low=low))


def _plots(selection, details, units, side, compare) -> str:
    from .detail import load_points
    from .plots import plot_comparison, plot_speed_torque, temperature_text

    if not details:
        return "<p>No diagrams: no candidate passed.</p>"
    out = []
    env = selection.envelope
    if len(details) > 1 and compare > 1:
        entries = [(d.model, d.conditions, d.points) for d in details[:compare]]
        fig = plot_comparison(entries, units, side="load", load=load_points(env),
                              title=f"Top {len(entries)} compared")
        out.append('<figure id="plot-compare" class="compare">' + inline_svg(fig, "cmp", "comparison diagram")
                   + "<figcaption>The hot speed-torque line and continuous limit of each candidate, with the "
                     "cycle's operating points, all at the gear output so that the same load can be "
                     "compared.</figcaption></figure>")
    for i, d in enumerate(details):
        sub = f"envelope {env.name} · {units} units"
        fig = plot_speed_torque(d.model, d.conditions, d.points, units, side,
                                title=f"{i + 1}. {d.candidate}", subtitle=sub)
        tw = temperature_text(d.conditions.winding_temperature, units)
        cap = (f"Candidate {esc(d.candidate)}: motor {esc(d.motor)}, gear {esc(d.gear)} "
               f"(ratio {fmt_number(d.model.ratio)}, efficiency {fmt_number(d.model.efficiency, 3)}); hot line "
               f"at {d.conditions.voltage:.1f} V with the winding at {tw}.")
        out.append(f'<figure id="plot-{i + 1}" class="candidate">'
                   + inline_svg(fig, f"c{i + 1}", f"speed-torque diagram of {d.candidate}")
                   + f"<figcaption>{cap}</figcaption></figure>")
    return "".join(out)


def _rejected(selection) -> str:
    from ..select import CHECKS

    counts = selection.reason_counts()
    if not len(counts):
        return "<p>No candidate was rejected.</p>"
    table = selection.table
    rejected = table[~table["passed"]]
    rows = "".join(f'<tr><td><a href="#reason-{esc(k)}">{esc(k)}</a></td><td>{esc(CHECKS.get(k, ""))}</td>'
                   f'<td class="num">{int(v)}</td></tr>' for k, v in counts.items())
    out = ['<p class="lead">A candidate can fail several checks, so the counts add up to more than the '
           'number rejected.</p><div class="scroll"><table><thead><tr><th>check</th><th>meaning</th>'
           f'<th class="num">candidates</th></tr></thead><tbody>{rows}</tbody></table></div>']
    for key, count in counts.items():
        col = f"fails_{key}"
        part = rejected[rejected[col]] if col in rejected else rejected.iloc[0:0]
        items = []
        for _, r in part.head(_EXAMPLES).iterrows():
            text = _reason_for(r, key)
            items.append(f'<tr><td class="id">{esc(r["candidate"])}</td><td>{esc(text)}</td></tr>')
        more = f"<p>… and {int(count) - len(items)} more (all in the spreadsheet export).</p>" \
            if int(count) > len(items) else ""
        out.append(f'<section class="reason" id="reason-{esc(key)}"><h3><span class="count">{int(count)}</span>'
                   f'{esc(key)}: {esc(CHECKS.get(key, ""))}</h3><div class="scroll"><table><thead><tr>'
                   f"<th>candidate</th><th>why</th></tr></thead><tbody>{''.join(items)}</tbody></table></div>"
                   f"{more}</section>")
    return "".join(out)


def _reason_for(row, key: str) -> str:
    """The reason text of one check of a rejected row (texts are in check order)."""
    keys = [k for k in str(row.get("failed", "")).split(", ") if k]
    texts = [t for t in str(row.get("reasons", "")).split("; ") if t]
    if len(keys) == len(texts) and key in keys:
        return texts[keys.index(key)]
    return str(row.get("reasons", ""))


def _provenance(tables, motor_ids) -> str:
    prov = tables["provenance"]
    if not len(prov):
        return "<p>Not available: the report was made without the catalogue.</p>"
    rid, field, how = prov.column("record_id").values, prov.column("field").values, prov.column("how").values
    val, unit, text = prov.column("value").values, prov.column("unit").values, prov.column("text").values
    wanted = {"motor": set(USED_FIELDS["motor"]), "gearhead": set(USED_FIELDS["gearhead"])}
    out, current = [], None
    rows = []

    def flush():
        if current is not None:
            out.append(f'<h3 id="prov-{esc(current)}">{esc(current)}</h3><div class="scroll"><table><thead><tr>'
                       '<th>field</th><th class="num">value</th><th>unit</th><th>given or derived, from what</th>'
                       f"</tr></thead><tbody>{''.join(rows)}</tbody></table></div>")

    for i in range(len(prov)):
        if field[i] not in wanted["motor" if rid[i] in motor_ids else "gearhead"]:
            continue
        if rid[i] != current:
            flush()
            current, rows = rid[i], []
        shown = fmt_number(val[i]) if val[i] is not None else (text[i] or "")
        u = unit[i] if unit[i] not in (None, "1") else ""
        rows.append(f"<tr><td>{esc(field[i])}</td><td class=\"num\">{esc(shown)}</td><td>{esc(u)}"
                    f"</td><td>{esc(how[i])}</td></tr>")
    flush()
    return ('<p class="lead">The values the checks read, per record of the shortlist, as stored in the '
            "catalogue: given (with the text as written and its file and row) or derived (with the relation "
            "and its inputs). Every field is in the spreadsheet export.</p>" + "".join(out))


def _cycle(selection, units: str) -> str:
    """The duty cycle at the gear output: the table ``motorshelf cycle`` prints and a plot of one cycle."""
    from ..select.motion import gear_output_cycle
    from .cycle import cycle_frame, plot_cycle
    from .html import fmt_number

    cyc = gear_output_cycle(selection.envelope)
    frame = cycle_frame(cyc, units)
    head = "".join(f"<th>{esc(c)}</th>" for c in frame.columns)
    rows = "".join("<tr>" + "".join(f'<td class="num">{esc(fmt_number(v))}</td>' if isinstance(v, float)
                                    else f"<td>{esc(v)}</td>" for v in row) + "</tr>"
                   for row in frame.itertuples(index=False))
    from ..units import to_display

    value, unit = to_display([cyc.inertia], "inertia", units)
    mech = (f"<p>Mechanism {esc(cyc.mechanism.describe())}.</p>" if cyc.mechanism is not None else "")
    lead = (f'{mech}<p class="lead">What the gear output must deliver, segment by segment (torque with the '
            f"acceleration of the load's masses); load inertia at the gear output {esc(fmt_number(value[0]))} "
            f"{esc(unit)} (for information: it is in the torques).</p>")
    table = f'<div class="scroll"><table><thead><tr>{head}</tr></thead><tbody>{rows}</tbody></table></div>'
    fig = plot_cycle(cyc, units)
    plot = "" if fig is None else ('<figure id="plot-cycle" class="cycle">'
                                   + inline_svg(fig, "cyc", f"speed and torque of {cyc.envelope} over one cycle")
                                   + "<figcaption>Speed and torque at the gear output over one cycle.</figcaption>"
                                     "</figure>")
    return lead + table + plot


def render_report(selection, units: str = "metric", catalog=None, side: str = "motor",
                  plots: int | None = None, compare: int = 4) -> str:
    """The report as an HTML string (see :func:`write_report`)."""
    from .catalogue import about_block
    from .detail import candidate_detail, catalog_or_none, records_used
    from .selection import CAUTION, caution_lines, selection_tables

    cat = catalog_or_none(selection, catalog)
    tables = {t.name: t for t in selection_tables(selection, units, cat)}
    ids = list(selection.shortlist["candidate"])[: (len(selection.shortlist) if plots is None else plots)]
    details = []
    if cat is not None and ids:
        motors, gears = records_used(selection, cat, ids)
        details = [candidate_detail(selection, cid, cat, motors, gears) for cid in ids]
    env = selection.envelope
    about = about_block(cat, units)
    rows = caution_lines(selection, cat)
    cautions = "".join(f"<li><strong>{esc(t)}:</strong> {esc(x)}</li>" for t, x in rows)
    no_plots = "" if cat is not None else "<p>No diagrams: the report was made without the catalogue.</p>"
    sections = [
        ("summary", "Summary", _facts(selection)
         + f'<aside class="caution" role="note"><strong>Caution.</strong> {esc(CAUTION)}</aside>'),
        ("envelope", "Envelope", (f'<p class="lead">{esc(env.description)}</p>' if env.description else "")
         + f"<p>From <code>{esc(env.source)}</code>: each input as written and in {esc(units)} units "
           "(hover an input for its meaning; every input with its meaning is in the spreadsheet export).</p>"
         + _envelope(selection, units)),
        ("cycle", "Duty cycle at the gear output", _cycle(selection, units)),
        ("shortlist", "Shortlist", _shortlist(selection, tables)),
        ("plots", "Speed-torque diagrams", no_plots or _plots(selection, details, units, side, compare)),
        ("rejected", "Rejected candidates", _rejected(selection)),
        ("provenance", "Where the values come from", _provenance(tables, set(selection.shortlist["motor"]))),
        ("cautions", "Cautions", f'<ul class="cautions">{cautions}</ul>'),
    ]
    toc = "".join(f'<a href="#{k}">{esc(t)}</a>' for k, t, _ in sections)
    body = "".join(f'<section id="{k}" class="{k}"><h2>{esc(t)}</h2>{html}</section>' for k, t, html in sections)
    meta = (f"Catalogue {esc(about['catalogue'] or '(not given)')} · envelope {esc(env.name)} · "
            f"{esc(about['program'])} · {esc(about['created'])}")
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>Motor selection: {esc(env.name)}</title><style>{STYLE}</style></head><body><main>"
            f'<header class="top"><h1>Motor selection: {esc(env.name)}</h1><p>{meta}</p></header>'
            f'<nav class="toc" aria-label="contents">{toc}</nav>{body}'
            f"<footer>Made by {esc(about['program'])}. Units: {esc(units)}; values are stored in SI. "
            f"{esc(CAUTION)}</footer></main></body></html>\n")


def write_report(selection, path, units: str = "metric", catalog=None, side: str = "motor",
                 plots: int | None = None, compare: int = 4) -> Path:
    """Write the HTML report of ``selection`` to ``path``.

    Parameters
    ----------
    selection : Selection
        The result of ``catalog.open(db).select(envelope)``.
    path : str or Path
        The ``.html`` file.
    units : str
        Display preset ``si``, ``metric`` (or its older name ``datasheet``) or ``imperial``.
    catalog : Catalog, optional
        The catalogue the selection came from (diagrams and provenance need it);
        default ``selection.catalog``.
    side : str
        ``motor`` (motor shaft) or ``load`` (gear output) for the per-candidate diagrams.
    plots : int, optional
        Diagrams for the first ``plots`` shortlisted candidates (default all).
    compare : int
        Candidates in the comparison diagram.
    """
    from ..store.files import output_file

    path = Path(path)
    text = render_report(selection, units, catalog, side, plots, compare)
    with output_file(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path
