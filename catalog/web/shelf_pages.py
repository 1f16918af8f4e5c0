"""The shelf pages: what is where, low stock, reservations, the movement forms, one stock item's
page and a printable sheet of labels with a QR code per item that opens that page."""
from __future__ import annotations

__all__ = ["routes", "FORMS", "item_url"]

import inspect
from urllib.parse import urlencode

from starlette.responses import RedirectResponse
from starlette.routing import Route

from ..errors import InputError, Problem
from .common import catalog_of, in_thread, person_of, read_form, render
from .pages import local_target
from .security import PERSON_COOKIE

#: Form verb → (Catalog method, title, fields shown).  The field names are the method's arguments.
FORMS = {
    "take": ("stock_take", "Take", ["record_id", "quantity", "location", "condition", "project", "reason"]),
    "return": ("stock_return", "Return", ["record_id", "quantity", "location", "condition", "project", "reason"]),
    "move": ("stock_move", "Move", ["record_id", "quantity", "from_location", "to_location", "condition",
                                    "to_condition", "reason"]),
    "reserve": ("stock_reserve", "Reserve", ["record_id", "quantity", "project", "location", "condition",
                                             "reason"]),
    "release": ("stock_release", "Release", ["reservation_id", "quantity", "reason"]),
    "count": ("stock_adjust", "Count", ["record_id", "counted", "location", "condition", "reason"]),
    "receive": ("stock_receive", "Receive", ["record_id", "quantity", "location", "condition", "min_quantity",
                                             "notes", "reason"]),
}
CONDITIONS = ("new", "used", "needs-testing", "faulty")
_INTEGER_ARGS = {"reservation_id", "reservation"}


def item_url(record_id: str, location: str, condition: str) -> str:
    return "/shelf/item?" + urlencode({"record": record_id, "location": location, "condition": condition})


async def shelf(request):
    cat = catalog_of(request)
    location = " ".join(str(request.query_params.get("location") or "").split())
    items = await in_thread(cat.stock_list, location or None)
    low = await in_thread(cat.stock_low, location or None)
    reservations = await in_thread(cat.stock_reservations)
    movements = await in_thread(cat.stock_movements, 30, location or None)
    groups: dict = {}
    for rec in items.to_dict("records"):
        rec["url"] = item_url(rec["id"], rec["location"], rec["condition"])
        groups.setdefault(rec["location"], []).append(rec)
    ids = await in_thread(cat.ids)
    return render(request, "shelf.html", {
        "location": location, "groups": groups, "pieces": int(items["on_hand"].sum()) if len(items) else 0,
        "low": low.to_dict("records"), "reservations": reservations.to_dict("records"),
        "movements": movements.to_dict("records"), "forms": FORMS, "conditions": CONDITIONS, "ids": ids,
        "prefill": {}, "next": request.url.path + (f"?{request.url.query}" if request.url.query else ""),
        "note": request.app.state.notes.get(request.query_params.get("note")),
    })


async def item_page(request):
    cat = catalog_of(request)
    qp = request.query_params
    rid, location, condition = qp.get("record", ""), qp.get("location", ""), qp.get("condition", "")
    if not rid:
        raise InputError("record: missing, expected a catalogue id", [Problem("record", None, None, "missing")])
    view = await in_thread(cat.show, rid)
    rtype, maker, part = view.record_type, view.manufacturer, view.part_number
    items = await in_thread(cat.stock_list, None, rid, True)
    mine = items[(items["location"] == location) & (items["condition"] == condition)] if location else items.iloc[0:0]
    movements = await in_thread(cat.stock_history, rid)
    if location:
        movements = movements[movements["location"] == location]
    here = item_url(rid, location, condition)
    return render(request, "item.html", {
        "rid": rid, "rtype": rtype, "maker": maker, "part": part, "location": location, "condition": condition,
        "item": mine.to_dict("records")[0] if len(mine) else None, "others": items.to_dict("records"),
        "movements": movements.to_dict("records"), "forms": FORMS, "conditions": CONDITIONS, "ids": [rid],
        "prefill": {"record_id": rid, "location": location, "from_location": location, "condition": condition},
        "next": here, "note": request.app.state.notes.get(qp.get("note")),
    })


def _kwargs(verb: str, form, method, person: str, token_mode: bool):
    """The keyword arguments of ``method`` from the form (empty fields left out)."""
    params = inspect.signature(method).parameters
    kwargs, problems = {}, []
    for name in FORMS[verb][2]:
        text = " ".join(str(form.get(name) or "").split())
        if not text:
            continue
        if name in _INTEGER_ARGS:
            if not text.isdigit():
                problems.append(Problem(name, None, None, f"{text!r} is not a reservation number, expected e.g. 3"))
                continue
            kwargs[name] = int(text)
        else:
            kwargs[name] = text
    for name, p in params.items():
        if p.default is inspect.Parameter.empty and name not in kwargs:
            problems.append(Problem(name, None, None, "missing, this field is required"))
    if person:
        kwargs["person"] = person
    elif token_mode:
        problems.append(Problem("person", None, None, "missing, every movement records who made it "
                                                      "(sign in with your name)"))
    if problems:
        raise InputError(f"{len(problems)} problem(s) in the form", problems)
    return kwargs


async def movement(request):
    verb = request.path_params["verb"]
    if verb not in FORMS:
        raise InputError(f"no shelf form {verb!r}, expected one of {', '.join(FORMS)}")
    form = await read_form(request)
    cat = catalog_of(request)
    method = getattr(cat, FORMS[verb][0])
    person = person_of(request, form.get("person"))
    target = local_target(form.get("next"), "/shelf")
    kwargs = _kwargs(verb, form, method, person, bool(request.app.state.token))
    change = await in_thread(method, **kwargs)
    note = request.app.state.notes.add(change.message)
    sep = "&" if "?" in target else "?"
    response = RedirectResponse(f"{target}{sep}note={note}", status_code=303)
    if form.get("person"):
        response.set_cookie(PERSON_COOKIE, person, httponly=True, samesite="strict", path="/",
                            max_age=365 * 24 * 3600)
    return response


async def labels(request):
    import segno

    cat = catalog_of(request)
    location = " ".join(str(request.query_params.get("location") or "").split())
    items = await in_thread(cat.stock_list, location or None)
    base = str(request.base_url).rstrip("/")
    out = []
    for rec in items.to_dict("records"):
        url = base + item_url(rec["id"], rec["location"], rec["condition"])
        qr = segno.make(url, error="m")
        out.append({**rec, "url": url, "qr": qr.svg_data_uri(scale=3, border=2, dark="#111")})
    return render(request, "labels.html", {"labels": out, "location": location})


routes = [
    Route("/shelf", shelf, methods=["GET"]),
    Route("/shelf/item", item_page, methods=["GET"]),
    Route("/shelf/labels", labels, methods=["GET"]),
    Route("/shelf/{verb}", movement, methods=["POST"]),
]
