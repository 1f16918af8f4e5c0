"""The JSON API: a mirror of the Python API (``Catalog`` methods) over HTTP.

The contract: ``GET /api/health``; ``GET /api/motors`` and ``GET /api/gearheads`` (records
in SI, filters as query parameters); ``GET /api/records/{id}``; ``POST /api/select``
(the envelope TOML as the body, ``Content-Type: application/toml``) answering the JSON
document ``motorshelf select ENVELOPE --out result.json --units si`` writes;
``POST /api/stock/{verb}`` with a JSON object of the keyword arguments of the matching
``Catalog.stock_*`` method, answering the new levels.  An input mistake answers 422 with
the problem lines the command line prints (``lines``), an unknown record 404, a busy
catalogue 503; never a traceback.  ``GET /api/openapi.json`` describes it all.

Each endpoint's docstring holds its OpenAPI description after ``---``.
"""
from __future__ import annotations

__all__ = ["routes", "STOCK_VERBS", "openapi", "json_response"]

import inspect
import json
import math

from starlette.responses import JSONResponse, Response
from starlette.routing import Route

from .. import __version__
from ..errors import InputError, Problem
from .common import catalog_of, in_thread, missing, person_of

#: verb of the URL → Catalog method (the shelf's movements; ``history`` etc. are reads).
STOCK_VERBS = {"receive": "stock_receive", "take": "stock_take", "return": "stock_return",
               "move": "stock_move", "adjust": "stock_adjust", "reserve": "stock_reserve",
               "release": "stock_release", "write-off": "stock_write_off"}
#: Keyword arguments the server fills itself (the time of a movement is the server's).
_SERVER_KWARGS = {"at"}
MAX_JSON_BYTES = 64 * 1024


def json_response(doc, status: int = 200) -> Response:
    """``doc`` as a JSON answer (no NaN: a document the API sends is strict JSON)."""
    return Response(json.dumps(doc, ensure_ascii=False, allow_nan=False, default=str),
                    status_code=status, media_type="application/json")


def _clean(v):
    if isinstance(v, float) and not math.isfinite(v):
        return None
    if hasattr(v, "item"):   # numpy scalars
        return _clean(v.item())
    return v


def _refuse(problems, message=None, status=422) -> Response:
    from .common import error_payload

    exc = InputError(message or f"{len(problems)} problem(s) in the request", problems)
    return json_response(error_payload(exc), status)


async def health(request):
    """The server is up and holds a catalogue.
    ---
    summary: Health and the catalogue's counts
    responses:
      200:
        description: "{status: ok, version, catalogue, counts: {suppliers, motors, gearheads, given_values,
          derived_values}}"
    """
    cat = catalog_of(request)
    counts = await in_thread(cat.summary)
    return json_response({"status": "ok", "version": __version__, "catalogue": str(cat.path), "counts": counts,
                  "writing": cat.store.writing})


def _kind_endpoint(kind: str):
    async def records(request):
        from ..browse import KINDS, browse, parse_filters, si_units

        cat = catalog_of(request)
        params = dict(request.query_params)
        q = params.pop("q", None)
        sort = params.pop("sort", "id")
        order = params.pop("order", "asc")
        problems = []
        paging = {}
        for key, default in (("limit", 1000), ("offset", 0)):
            text = params.pop(key, None)
            try:
                paging[key] = int(text) if text not in (None, "") else default
            except ValueError:
                problems.append(Problem(key, None, None, f"{text!r} is not a whole number"))
        if problems:
            return _refuse(problems)
        frame = await in_thread(cat.motors if kind == "motors" else cat.gearheads)
        rtype = KINDS[kind]
        filters = parse_filters(rtype, params, si_units(rtype))   # bounds without a unit are SI here
        page = browse(frame, rtype, filters, q, sort, order, paging["offset"], paging["limit"])
        from ..fields import fields_for
        from ..units import get_dimension

        units = {}
        for name, f in fields_for(rtype).items():
            if f.is_quantity:
                units[name] = get_dimension(f.dimension).display["si"][0] or "1"
        rows = page.rows
        records = json.loads(rows.to_json(orient="records", double_precision=15, force_ascii=False))
        return json_response({"kind": kind, "total": page.total, "offset": page.offset, "limit": page.limit,
                      "sort": page.sort, "order": page.order, "units": units, "records": records})

    records.__name__ = kind
    records.__doc__ = f"""The {kind} of the catalogue in SI, filtered, sorted and paged.
    ---
    summary: {kind.capitalize()} in SI units
    parameters:
      - {{name: q, in: query, schema: {{type: string}}, description: "text in the id, manufacturer or part number"}}
      - {{name: FIELD.min, in: query, schema: {{type: string}}, description: "lower bound of a number field:
          SI, or with its unit ('200 g')"}}
      - {{name: FIELD.max, in: query, schema: {{type: string}}, description: "upper bound of a number field"}}
      - {{name: FIELD, in: query, schema: {{type: string}}, description: "a text field containing the text
          (ignoring case), or a number field equal to the value"}}
      - {{name: sort, in: query, schema: {{type: string, default: id}}}}
      - {{name: order, in: query, schema: {{type: string, enum: [asc, desc]}}}}
      - {{name: limit, in: query, schema: {{type: integer, default: 1000, maximum: 1000}}}}
      - {{name: offset, in: query, schema: {{type: integer, default: 0}}}}
    responses:
      200:
        description: "{{kind, total, offset, limit, sort, order, units: {{field: SI unit}}, records: [...]}}"
      422:
        description: "{{error, problems, lines}}: the filter mistakes, one line each"
    """
    return records


async def record(request):
    """One record: every stored value with its raw text and provenance, its flags and shelf.
    ---
    summary: One record with provenance
    parameters:
      - {name: record_id, in: path, required: true, schema: {type: string}}
    responses:
      200:
        description: "{id, record_type, manufacturer, part_number, values: [{field, value_si, si_unit, text,
          raw_text, raw_unit, origin, relation, inputs, source_file, source_row, batch_id}], flags, stock}"
      404:
        description: "{error, suggestions}: no such record"
    """
    from ..fields import fields_for
    from ..units import get_dimension

    cat = catalog_of(request)
    rid = request.path_params["record_id"]
    view = await in_thread(cat.show, rid, "si")
    rtype, maker, part = view.record_type, view.manufacturer, view.part_number
    values = view.values[view.values["origin"].notna()]     # the fields with a stored value
    flags = await in_thread(cat.check, None, rid)
    stock = await in_thread(cat.stock_list, None, rid)
    fields = fields_for(rtype)
    out = []
    for row in values.itertuples(index=False):
        f = fields.get(row.field)
        unit = get_dimension(f.dimension).display["si"][0] if f is not None and f.is_quantity else None
        out.append({"field": row.field, "value_si": _clean(row.value_num), "si_unit": unit,
                    "text": _clean(row.value_text), "raw_text": _clean(row.raw_text), "raw_unit": _clean(row.raw_unit),
                    "origin": row.origin, "relation": _clean(row.relation), "inputs": _clean(row.inputs),
                    "source_file": _clean(row.source_file),
                    "source_row": None if missing(row.source_row) else int(row.source_row),
                    "batch_id": None if missing(row.batch_id) else int(row.batch_id)})
    order = {name: i for i, name in enumerate(fields)}
    out.sort(key=lambda v: order.get(v["field"], len(order)))
    return json_response({"id": rid, "record_type": rtype, "manufacturer": maker, "part_number": part, "values": out,
                  "flags": [{"relation": f.relation, "field": f.field, "given": f.given, "given_value": _clean(f.given_value),
                             "implied_value": _clean(f.implied_value), "residual": _clean(f.residual), "text": str(f)}
                            for f in flags],
                  "stock": json.loads(stock.to_json(orient="records", date_format="iso", force_ascii=False))})


async def _body_limited(request, limit: int) -> bytes:
    data = bytearray()
    async for chunk in request.stream():
        data += chunk
        if len(data) > limit:
            break
    return bytes(data)


def selection_document(cat, sel) -> bytes:
    """The JSON document ``select --out result.json --units si`` writes (the same tables and
    ``about``, :func:`catalog.export.selection.selection_document`), compactly encoded."""
    from ..export.selection import selection_document as document

    return json.dumps(document(sel, "si", cat), ensure_ascii=False).encode("utf-8")


def run_envelope(cat, data: bytes, source: str, top=None, stock=None, every_row: bool = False):
    """Validate the envelope text ``data`` (named ``source`` in messages) and select (``every_row``: the
    caller reads every candidate, see :func:`catalog.select.select`)."""
    import tempfile
    from pathlib import Path

    from ..select.envelope import load_envelope

    with tempfile.TemporaryDirectory(prefix="motorshelf-") as d:
        path = Path(d) / "envelope.toml"
        path.write_bytes(data)
        env = load_envelope(path, source=source)   # the CLI's checks and lines, named after the upload
    return cat.select(env, top=top, stock=stock, every_row=every_row)


async def select(request):
    """Select motors for a load envelope; answers the JSON document of `select --out result.json --units si`.
    ---
    summary: Run a selection
    parameters:
      - {name: top, in: query, schema: {type: integer, minimum: 1}, description: "shortlist length"}
      - {name: stock, in: query, schema: {type: string, enum: [only, prefer, ignore]}}
    requestBody:
      required: true
      content:
        application/toml:
          schema: {type: string, description: "the load envelope (schemas/envelope.schema.json)"}
    responses:
      200:
        description: "the selection document: about, table, units, records (the shortlist), tables
          (rejected, rejection counts, envelope, provenance, cautions); SI units"
      415:
        description: "the body is not application/toml"
      422:
        description: "{error, problems, lines}: the envelope's mistakes, the lines the CLI prints"
    """
    from ..select.envelope import MAX_ENVELOPE_BYTES

    ctype = request.headers.get("content-type", "").split(";")[0].strip().lower()
    if ctype not in ("application/toml", "text/toml"):
        return json_response({"error": f"content type {ctype or '(none)'!r}, expected application/toml (the envelope "
                               "as TOML text)", "lines": []}, 415)
    problems = []
    top_text = request.query_params.get("top")
    top = None
    if top_text is not None:
        if top_text.strip().isdigit() and int(top_text) >= 1:
            top = int(top_text)
        else:
            problems.append(Problem("top", None, None, f"{top_text!r}, expected a whole number of 1 or more"))
    stock = request.query_params.get("stock")
    if stock is not None and stock not in ("only", "prefer", "ignore"):
        problems.append(Problem("stock", None, None, f"{stock!r}, expected only, prefer or ignore"))
    if problems:
        return _refuse(problems)
    data = await _body_limited(request, MAX_ENVELOPE_BYTES)
    cat = catalog_of(request)

    def work():
        sel = run_envelope(cat, data, "envelope.toml", top, stock, every_row=True)   # the document holds every candidate
        return selection_document(cat, sel)

    body = await in_thread(work)
    return Response(body, media_type="application/json")


def _levels(change) -> list:
    return [{"location": loc, "condition": cond, "on_hand": int(q), "reserved": int(r), "available": int(a)}
            for loc, cond, q, r, a in change.items]


async def stock(request):
    """A shelf movement: the keyword arguments of the matching `Catalog.stock_*` method as JSON.
    ---
    summary: Receive, take, return, move, adjust, reserve, release or write off pieces
    parameters:
      - name: verb
        in: path
        required: true
        schema: {type: string, enum: [receive, take, return, move, adjust, reserve, release, write-off]}
    requestBody:
      required: true
      content:
        application/json:
          schema:
            type: object
            description: "e.g. take: {record_id, quantity, location, condition, person, project, reason,
              reservation, serial_numbers}; person is required when the server has a team token"
    responses:
      200:
        description: "{kind, record_id, quantity, movement_ids, batch_id, reservation_id, message,
          levels: [{location, condition, on_hand, reserved, available}]}"
      404:
        description: "no such verb"
      415:
        description: "the body is not application/json"
      422:
        description: "{error, problems, lines}: the mistakes, the lines the CLI prints"
    """
    verb = request.path_params["verb"]
    if verb not in STOCK_VERBS:
        return json_response({"error": f"no stock verb {verb!r}, expected one of {', '.join(STOCK_VERBS)}",
                      "lines": []}, 404)
    ctype = request.headers.get("content-type", "").split(";")[0].strip().lower()
    if ctype != "application/json":
        return json_response({"error": f"content type {ctype or '(none)'!r}, expected application/json "
                               "(the keyword arguments as a JSON object)", "lines": []}, 415)
    raw = await _body_limited(request, MAX_JSON_BYTES)
    if len(raw) > MAX_JSON_BYTES:
        return _refuse([Problem("body", None, None, f"more than {MAX_JSON_BYTES // 1024} KiB, expected a small "
                                                    "JSON object")])
    try:
        kwargs = json.loads(raw.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        return _refuse([Problem("body", None, None, f"not valid JSON ({exc}), expected a JSON object")])
    if not isinstance(kwargs, dict):
        return _refuse([Problem("body", None, None, f"a JSON {type(kwargs).__name__}, expected an object of "
                                                    "keyword arguments")])
    cat = catalog_of(request)
    method = getattr(cat, STOCK_VERBS[verb])
    params = {n: p for n, p in inspect.signature(method).parameters.items() if n not in _SERVER_KWARGS}
    problems = []
    for key in kwargs:
        if key not in params:
            problems.append(Problem("body", None, key, f"unknown argument of {verb}, expected one of "
                                                        f"{', '.join(params)}"))
    for name, p in params.items():
        if p.default is inspect.Parameter.empty and name not in kwargs:
            problems.append(Problem("body", None, name, "missing, this argument is required"))
    for key, value in kwargs.items():
        if isinstance(value, (dict, list)) and key != "serial_numbers":
            problems.append(Problem("body", None, key, f"a JSON {type(value).__name__}, expected a number or text"))
    if "person" in params:
        person = person_of(request, kwargs.get("person"))
        if person:
            kwargs["person"] = person
        elif request.app.state.token:
            problems.append(Problem("body", None, "person", "missing, every movement records who made it "
                                                            "(the team server needs a name)"))
    if isinstance(kwargs.get("serial_numbers"), list):
        kwargs["serial_numbers"] = ";".join(map(str, kwargs["serial_numbers"]))
    if problems:
        return _refuse(problems)
    change = await in_thread(method, **kwargs)
    return json_response({"kind": change.kind, "record_id": change.record_id, "quantity": change.quantity,
                  "movement_ids": [int(m) for m in change.movement_ids], "batch_id": change.batch_id,
                  "reservation_id": change.reservation_id, "message": change.message,
                  "levels": _levels(change)})


def openapi(request):
    """This description."""
    from starlette.schemas import SchemaGenerator

    gen = SchemaGenerator({"openapi": "3.0.3", "info": {
        "title": "motorshelf", "version": __version__,
        "description": "The catalogue of PM DC motors and gearheads, its selection and its shelf, "
                       "as JSON. Values are SI. With a team token, send 'Authorization: Bearer TOKEN'."}})
    schema = gen.get_schema(routes=[r for r in request.app.routes if getattr(r, "path", "").startswith("/api/")])
    return JSONResponse(schema)


routes = [
    Route("/api/health", health, methods=["GET"]),
    Route("/api/motors", _kind_endpoint("motors"), methods=["GET"]),
    Route("/api/gearheads", _kind_endpoint("gearheads"), methods=["GET"]),
    Route("/api/records/{record_id:path}", record, methods=["GET"]),
    Route("/api/select", select, methods=["POST"]),
    Route("/api/stock/{verb}", stock, methods=["POST"]),
    Route("/api/openapi.json", openapi, methods=["GET"], include_in_schema=False),
]
