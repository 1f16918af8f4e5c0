"""The selection pages: an envelope (edited, uploaded or an example), the run, the shortlist with
its margins, the rejection counts, the story of any candidate, diagrams and the downloads."""
from __future__ import annotations

__all__ = ["routes", "examples"]

import re
from pathlib import Path

from starlette.responses import RedirectResponse, Response
from starlette.routing import Route

from ..errors import InputError, NotFound, Problem
from .common import catalog_of, in_thread, preset_of, problem_lines, read_form, render

#: The example envelopes of a source checkout (``queries/`` beside the package), if any.
EXAMPLES = Path(__file__).resolve().parent.parent.parent / "queries"
STOCK_MODES = ("", "ignore", "prefer", "only")


def examples() -> dict:
    if not EXAMPLES.is_dir():
        return {}
    return {p.stem: p for p in sorted(EXAMPLES.glob("*.toml"))}


def _safe_name(text: str, default: str = "envelope") -> str:
    name = re.sub(r"[^A-Za-z0-9._-]+", "_", str(text)).strip("._")[:60]
    return name or default


def _form_page(request, text: str, lines=(), source: str = "envelope.toml", top="", stock="", status=200):
    return render(request, "select.html", {"text": text, "lines": list(lines), "source": source,
                                           "examples": list(examples()), "top": top, "stock": stock,
                                           "stock_modes": STOCK_MODES}, status_code=status)


async def select_form(request):
    name = request.query_params.get("example")
    text, source, lines = "", "envelope.toml", []
    found = examples()
    if name:
        if name in found:
            text, source = found[name].read_text(encoding="utf-8"), f"{name}.toml"
        else:
            lines = [f"error: example {name!r} not found, expected one of {', '.join(found) or '(none here)'}"]
    elif found:
        first = next(iter(found))
        text, source = found[first].read_text(encoding="utf-8"), f"{first}.toml"
    return _form_page(request, text, lines, source, status=404 if lines else 200)


async def run_selection(request):
    from ..select.envelope import MAX_ENVELOPE_BYTES
    from .api_routes import run_envelope

    form = await read_form(request)
    text = str(form.get("envelope") or "")
    source = _safe_name(form.get("source") or "envelope.toml", "envelope.toml")
    upload = form.get("file")
    top_text, stock = str(form.get("top") or "").strip(), str(form.get("stock") or "")
    problems = []
    if upload is not None and hasattr(upload, "read") and getattr(upload, "filename", ""):
        data = await upload.read(MAX_ENVELOPE_BYTES + 1)
        source = _safe_name(Path(upload.filename).name, "envelope.toml")
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError:
            text = ""
        if form.get("action") == "load":
            lines = [] if text else [f"error: {source}: not UTF-8 text, expected a TOML envelope"]
            return _form_page(request, text, lines, source, top_text, stock, 422 if lines else 200)
    else:
        data = text.replace("\r\n", "\n").encode("utf-8")
    top = None
    if top_text:
        if top_text.isdigit() and int(top_text) >= 1:
            top = int(top_text)
        else:
            problems.append(Problem("top", None, None, f"{top_text!r}, expected a whole number of 1 or more"))
    if stock not in STOCK_MODES:
        problems.append(Problem("stock", None, None, f"{stock!r}, expected ignore, prefer or only"))
    if problems:
        exc = InputError(f"{len(problems)} problem(s)", problems)
        return _form_page(request, text, problem_lines(exc), source, top_text, stock, 422)
    cat = catalog_of(request)
    try:
        sel = await in_thread(run_envelope, cat, data, source, top, stock or None)
    except InputError as exc:
        return _form_page(request, text, problem_lines(exc), source, top_text, stock, 422)
    run_id = request.app.state.runs.add({"selection": sel, "text": text, "source": source})
    return RedirectResponse(f"/select/runs/{run_id}", status_code=303)


def _run(request):
    run = request.app.state.runs.get(request.path_params["run"])
    if run is None:
        raise NotFound("no such selection run (runs are kept while the server runs, the latest 16); "
                       "run the envelope again")
    return run


async def result_page(request):
    from ..present import display_shortlist
    from ..export.selection import CAUTION, caution_lines
    from ..select.registry import CHECKS

    run = _run(request)
    sel = run["selection"]
    cat = catalog_of(request)
    n_pass, n_rej = sel.counts
    shown = display_shortlist(sel.shortlist) if n_pass else None
    counts = sel.reason_counts()
    cautions = await in_thread(caution_lines, sel, cat)
    table = {"columns": list(shown.columns), "rows": shown.to_dict("records")} if shown is not None else None
    notes = [(int(r.rank), r.notes) for r in sel.shortlist.itertuples(index=False) if r.notes]
    return render(request, "select_result.html", {
        "run": request.path_params["run"], "env": sel.envelope, "source": run["source"], "n_pass": n_pass,
        "n_rej": n_rej, "table": table, "notes": notes,
        "counts": [(k, int(v), CHECKS.get(k, "")) for k, v in counts.items()], "caution": CAUTION,
        "cautions": [c for c in cautions if c[0] != "caution"], "stock_mode": sel.stock_mode,
        "candidates": list(sel.shortlist["candidate"]),
        "rank_keys": ", ".join(sel.envelope.rank_keys),
    })


async def explain(request):
    run = _run(request)
    cid = " ".join(str(request.query_params.get("candidate") or "").split())
    if not cid:
        raise InputError("candidate: missing, expected a candidate id (from the shortlist or the rejected list)",
                         [Problem("candidate", None, None, "missing, expected a candidate id")])
    text = await in_thread(run["selection"].explain, cid)
    has_diagram = True
    return render(request, "_explain.html", {"run": request.path_params["run"], "candidate": cid, "text": text,
                                             "diagram": has_diagram})


async def candidate_diagram(request):
    run = _run(request)
    cid = request.path_params["candidate"]
    preset = preset_of(request)
    cat = catalog_of(request)
    side = request.query_params.get("side", "motor")
    if side not in ("motor", "load"):
        raise InputError(f"side {side!r}, expected motor or load", [Problem("side", None, None,
                                                                            f"{side!r}, expected motor or load")])

    def draw():
        import io

        from ..export.figures import candidate_figure

        fig = candidate_figure(run["selection"], cid, cat, units=preset, side=side)
        buf = io.StringIO()
        fig.savefig(buf, format="svg")
        return buf.getvalue()

    svg = await in_thread(draw)
    return Response(svg, media_type="image/svg+xml",
                    headers={"content-security-policy": "default-src 'none'; style-src 'unsafe-inline'"})


async def comparison_diagram(request):
    """The first shortlisted candidates (up to four) in one diagram at the gear output."""
    run = _run(request)
    preset, cat = preset_of(request), catalog_of(request)
    sel = run["selection"]
    if len(sel.shortlist) < 2:
        raise NotFound("a comparison needs two shortlisted candidates or more")

    def draw():
        import io

        from ..export.figures import comparison_figure

        fig = comparison_figure(sel, catalog=cat, units=preset, top=4)
        buf = io.StringIO()
        fig.savefig(buf, format="svg")
        return buf.getvalue()

    svg = await in_thread(draw)
    return Response(svg, media_type="image/svg+xml",
                    headers={"content-security-policy": "default-src 'none'; style-src 'unsafe-inline'"})


def _attachment(name: str) -> dict:
    return {"content-disposition": f'attachment; filename="{name}"', "cache-control": "no-store"}


async def download_xlsx(request):
    import tempfile

    from ..export.selection import write_selection

    run = _run(request)
    sel, cat, preset = run["selection"], catalog_of(request), preset_of(request)

    def write():
        with tempfile.TemporaryDirectory(prefix="motorshelf-") as d:
            path = write_selection(sel, Path(d) / "selection.xlsx", units=preset, catalog=cat)
            return Path(path).read_bytes()

    data = await in_thread(write)
    name = f"{_safe_name(sel.envelope.name)}-selection-{preset}.xlsx"
    return Response(data, media_type="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
                    headers=_attachment(name))


async def download_report(request):
    from ..export.report import render_report

    run = _run(request)
    sel, cat, preset = run["selection"], catalog_of(request), preset_of(request)
    html = await in_thread(render_report, sel, preset, cat)
    headers = _attachment(f"{_safe_name(sel.envelope.name)}-report.html")
    headers["content-security-policy"] = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; sandbox"
    return Response(html, media_type="text/html; charset=utf-8", headers=headers)


async def download_envelope(request):
    run = _run(request)
    return Response(run["text"], media_type="application/toml; charset=utf-8",
                    headers=_attachment(_safe_name(run["source"], "envelope.toml")))


routes = [
    Route("/select", select_form, methods=["GET"]),
    Route("/select", run_selection, methods=["POST"]),
    Route("/select/runs/{run}", result_page, methods=["GET"]),
    Route("/select/runs/{run}/explain", explain, methods=["GET"]),
    Route("/select/runs/{run}/compare.svg", comparison_diagram, methods=["GET"]),
    Route("/select/runs/{run}/diagram/{candidate:path}.svg", candidate_diagram, methods=["GET"]),
    Route("/select/runs/{run}/selection.xlsx", download_xlsx, methods=["GET"]),
    Route("/select/runs/{run}/report.html", download_report, methods=["GET"]),
    Route("/select/runs/{run}/envelope.toml", download_envelope, methods=["GET"]),
]
