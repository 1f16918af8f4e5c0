"""The pages: catalogue, record, sign-in; the selection, shelf and import pages live in their
own modules and are collected in :data:`routes` here.

Every page reads through ``Catalog`` methods (run in the thread pool) and renders a Jinja2
template with autoescaping, so any supplier text is shown as text.
"""
from __future__ import annotations

__all__ = ["routes", "Runs", "Notes", "local_target"]

import math
import secrets
import threading
from collections import OrderedDict

from starlette.responses import RedirectResponse, Response
from starlette.routing import Route

from ..errors import InputError
from .common import catalog_of, in_thread, missing, preset_of, problem_lines, read_form, render
from .security import AUTH_COOKIE, PERSON_COOKIE, session_value

#: Query parameters of the catalogue page that are not filters.
_PAGE_KEYS = {"kind", "units", "q", "sort", "order", "page", "per"}
PER_PAGE = (25, 50, 100, 200)


class Runs:
    """Selections run from the pages, the latest :attr:`keep` of them, by id."""

    keep = 16

    def __init__(self):
        self._runs: OrderedDict = OrderedDict()
        self._lock = threading.Lock()

    def add(self, run: dict) -> str:
        run_id = secrets.token_urlsafe(9)
        with self._lock:
            self._runs[run_id] = run
            while len(self._runs) > self.keep:
                self._runs.popitem(last=False)
        return run_id

    def get(self, run_id: str):
        with self._lock:
            return self._runs.get(run_id)


class Notes:
    """Messages shown once a form has done its work (after the redirect), the latest 200, by id."""

    keep = 200

    def __init__(self):
        self._notes: OrderedDict = OrderedDict()
        self._lock = threading.Lock()

    def add(self, text: str) -> str:
        note_id = secrets.token_urlsafe(6)
        with self._lock:
            self._notes[note_id] = text
            while len(self._notes) > self.keep:
                self._notes.popitem(last=False)
        return note_id

    def get(self, note_id):
        with self._lock:
            return self._notes.get(note_id) if note_id else None


def local_target(text, default: str = "/") -> str:
    """``text`` when it is a path of this server (``/...``, not ``//host``), else ``default``."""
    if isinstance(text, str) and text.startswith("/") and not text.startswith("//") and "\\" not in text:
        return text
    return default


def _cell(value, unit=None) -> str:
    from .common import fmt

    if unit is not None:
        try:
            v = float(value)
        except (TypeError, ValueError):
            return ""
        return fmt(unit.to_display(v)) if math.isfinite(v) else ""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, float):
        return fmt(value)
    return str(value)


def _int_param(request, key: str, default: int, low: int, high: int, problems: list) -> int:
    from ..errors import Problem

    text = request.query_params.get(key)
    if text in (None, ""):
        return default
    try:
        value = int(text)
    except ValueError:
        problems.append(Problem(key, None, None, f"{text!r} is not a whole number"))
        return default
    if not low <= value <= high:
        problems.append(Problem(key, None, None, f"{value}, expected {low} to {high}"))
        return default
    return value


async def catalogue(request):
    from ..browse import KINDS, browse, column_units, parse_filters
    from ..errors import Problem
    from ..fields import fields_for
    from ..present import LIST_COLUMNS

    qp = request.query_params
    kind = qp.get("kind", "motors")
    problems: list = []
    if kind not in KINDS:
        problems.append(Problem("kind", None, None, f"{kind!r}, expected motors or gearheads"))
        kind = "motors"
    rtype = KINDS[kind]
    preset = preset_of(request)
    per = _int_param(request, "per", 50, 1, 500, problems)
    number = _int_param(request, "page", 1, 1, 10**9, problems)
    sort, order = qp.get("sort", "id"), qp.get("order", "asc")
    cat = catalog_of(request)
    frame = await in_thread(cat.motors if kind == "motors" else cat.gearheads)
    fields = fields_for(rtype)
    units = column_units(frame, rtype, preset)
    given = {k: v for k, v in qp.items() if k not in _PAGE_KEYS}
    page = None
    lines = [f"error: {p}" for p in problems]
    if not problems:
        try:
            filters = parse_filters(rtype, {k: v for k, v in given.items() if v.strip()}, units)
            page = browse(frame, rtype, filters, qp.get("q"), sort, order, (number - 1) * per, per)
        except InputError as exc:
            lines = problem_lines(exc)
    columns = [c for c in LIST_COLUMNS[rtype] if c in frame.columns or c == "id"]
    rows = []
    if page is not None:
        for rec in page.rows.to_dict("records"):
            rows.append({"id": rec["id"], "cells": [(_cell(rec.get(c), units.get(c)), bool(fields[c].is_numeric))
                                                    for c in columns[1:]]})
    numeric = [n for n, f in fields.items() if f.is_numeric]
    texts = [n for n, f in fields.items() if not f.is_numeric and n not in ("id",)]
    shown_filters = [c for c in LIST_COLUMNS[rtype] if c in numeric]
    context = {
        "kind": kind, "rtype": rtype, "columns": columns, "rows": rows, "page": page, "lines": lines,
        "units_of": {c: units[c].label for c in units}, "fields": fields, "numeric": numeric, "texts": texts,
        "shown_filters": shown_filters, "more_filters": [c for c in numeric if c not in shown_filters],
        "given": given, "q": qp.get("q", ""), "sort": sort, "order": order, "per": per, "per_options": PER_PAGE,
        "url": request.url, "total_records": len(frame),
    }
    status = 422 if lines else 200
    if request.headers.get("hx-request") and request.headers.get("hx-target") == "results":
        return render(request, "_catalogue_results.html", context, status_code=status)
    return render(request, "catalogue.html", context, status_code=status)


def _origin_text(row) -> str:
    if row.origin == "derived":
        inputs = row.inputs if isinstance(row.inputs, str) and row.inputs else ""
        return f"derived: {row.relation}" + (f", from {inputs}" if inputs else "")
    raw = row.raw_text if isinstance(row.raw_text, str) else ""
    unit = row.raw_unit if isinstance(row.raw_unit, str) and row.raw_unit and row.raw_unit not in raw else ""
    where = ""
    if isinstance(row.source_file, str) and row.source_file:
        where = row.source_file if missing(row.source_row) else f"{row.source_file}:{int(row.source_row)}"
    return f"given: {raw!r}" + (f" [{unit}]" if unit else "") + (f" ({where})" if where else "")


async def record_page(request):
    from ..fields import fields_for
    from ..present import display_value

    cat = catalog_of(request)
    rid = request.path_params["record_id"]
    preset = preset_of(request)
    view = await in_thread(cat.show, rid, "si")
    rtype, maker, part = view.record_type, view.manufacturer, view.part_number
    values = view.values[view.values["origin"].notna()]     # the fields with a stored value
    flags = await in_thread(cat.check, None, rid)
    stock = await in_thread(cat.stock_list, None, rid, True)
    movements = await in_thread(cat.stock_history, rid)
    history = await in_thread(cat.history, rid)
    by_field = {row.field: row for row in values.itertuples(index=False)}
    out = []
    for name, f in fields_for(rtype).items():
        if name in ("id", "manufacturer", "part_number"):
            continue
        row = by_field.get(name)
        if row is None:
            out.append({"name": name, "description": f.description, "value": "", "unit": "", "origin": "",
                        "kind": "missing", "numeric": f.is_numeric})
            continue
        if f.is_numeric and row.value_num == row.value_num and row.value_num is not None:
            v, label = display_value(float(row.value_num), f.dimension, preset, field=f)
            from .common import fmt

            value, unit = fmt(v, 5), label
        else:
            value, unit = ("" if row.value_text is None else str(row.value_text)), ""
        out.append({"name": name, "description": f.description, "value": value, "unit": unit,
                    "origin": _origin_text(row), "kind": row.origin, "numeric": f.is_numeric})
    changed = history[history["changed"]] if "changed" in history else history
    return render(request, "record.html", {
        "rid": rid, "rtype": rtype, "maker": maker, "part": part, "values": out, "flags": [str(f) for f in flags],
        "stock": stock.to_dict("records"), "movements": movements.to_dict("records"),
        "history": changed.to_dict("records"), "record_info": history.attrs.get("record", {}),
        "basis_note": view.basis_note,
    })


async def record_diagram(request):
    """The speed-torque diagram of a motor at its nominal voltage, 25 °C ambient, as SVG."""
    from ..errors import InputError as _InputError

    cat = catalog_of(request)
    rid = request.path_params["record_id"]
    preset = preset_of(request)

    def draw():
        import io

        from ..export.lines import Conditions, MotorModel
        from ..export.plots import plot_speed_torque

        view = cat.show(rid)
        rtype, maker, part, values = view.record_type, view.manufacturer, view.part_number, view.values
        if rtype != "motor":
            raise _InputError(f"{rid} is a {rtype}; a speed-torque diagram is drawn for motors")
        rec = {"id": rid}
        for row in values.itertuples(index=False):
            rec[row.field] = row.value_num if row.value_num == row.value_num and row.value_num is not None \
                else row.value_text
        volts = rec.get("nominal_voltage")
        model = MotorModel.from_record(rec)
        if not isinstance(volts, float) or not all(map(math.isfinite, (volts, model.terminal_resistance,
                                                                        model.torque_constant))):
            raise _InputError(f"{rid}: nominal voltage, terminal resistance or torque constant unknown; "
                              "no diagram")
        cond = Conditions(voltage=volts, nominal_voltage=volts, ambient_temperature=298.15)
        fig = plot_speed_torque(model, cond, [], preset, "motor", title=f"{rid}",
                                subtitle=f"{maker} {part} · {volts:g} V · 25 °C ambient · {preset} units")
        buf = io.StringIO()
        fig.savefig(buf, format="svg")
        return buf.getvalue()

    svg = await in_thread(draw)
    return Response(svg, media_type="image/svg+xml",
                    headers={"content-security-policy": "default-src 'none'; style-src 'unsafe-inline'",
                             "cache-control": "no-store"})


async def login_page(request):
    return render(request, "login.html", {"next": local_target(request.query_params.get("next")), "lines": []})


async def login(request):
    import hmac

    form = await read_form(request)
    target = local_target(form.get("next"))
    token = request.app.state.token
    name = " ".join(str(form.get("person") or "").split())[:200]
    given = str(form.get("token") or "")
    if token is None:
        response = RedirectResponse(target, status_code=303)
    elif not hmac.compare_digest(given.encode(), token.encode()):
        return render(request, "login.html", {"next": target, "lines": ["error: token: wrong team token"]},
                      status_code=401)
    elif not name:
        return render(request, "login.html", {"next": target, "lines": [
            "error: person: missing, the shelf records who takes and returns pieces"]}, status_code=422)
    else:
        response = RedirectResponse(target, status_code=303)
        response.set_cookie(AUTH_COOKIE, session_value(token), httponly=True, samesite="strict", path="/")
    if name:
        response.set_cookie(PERSON_COOKIE, name, httponly=True, samesite="strict", path="/",
                            max_age=365 * 24 * 3600)
    return response


async def logout(request):
    await read_form(request)
    response = RedirectResponse("/login" if request.app.state.token else "/", status_code=303)
    response.delete_cookie(AUTH_COOKIE, path="/")
    return response


def _favicon(request):
    from starlette.responses import FileResponse

    from .common import HERE

    return FileResponse(HERE / "static" / "favicon.svg", media_type="image/svg+xml")


def _home(request):
    return RedirectResponse("/catalogue", status_code=307)


def _collect():
    from . import import_pages, select_pages, shelf_pages

    return [
        Route("/", _home, methods=["GET"]),
        Route("/favicon.ico", _favicon, methods=["GET"]),
        Route("/catalogue", catalogue, methods=["GET"]),
        Route("/records/{record_id:path}/diagram.svg", record_diagram, methods=["GET"]),
        Route("/records/{record_id:path}", record_page, methods=["GET"]),
        Route("/login", login_page, methods=["GET"]),
        Route("/login", login, methods=["POST"]),
        Route("/logout", logout, methods=["POST"]),
        *select_pages.routes, *shelf_pages.routes, *import_pages.routes,
    ]


routes = _collect()
