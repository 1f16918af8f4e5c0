"""What every route shares: templates, the catalogue of the app, problem lines, form reading."""
from __future__ import annotations

__all__ = ["templates", "render", "catalog_of", "problem_lines", "error_payload", "read_form", "person_of",
           "fmt", "missing", "PRESETS", "preset_of", "in_thread", "MAX_FORM_FILES"]

import math
from pathlib import Path

from .security import CSRF_COOKIE, PERSON_COOKIE, check_csrf, csrf_token

HERE = Path(__file__).resolve().parent
PRESETS = ("metric", "si", "imperial")
MAX_FORM_FILES = 20


def fmt(value, digits: int = 4) -> str:
    """A number for people: about ``digits`` significant digits, whole numbers without exponent."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int,)) and not isinstance(value, bool):
        return str(value)
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(v):
        return ""
    if math.isinf(v):
        return "∞" if v > 0 else "−∞"
    a = abs(v)
    if 10 ** (digits - 1) <= a < 1e9:
        return f"{v:.0f}"
    return f"{v:.{digits}g}"


def missing(value) -> bool:
    """None, NaN, NaT or pandas' NA: a cell without a value."""
    if value is None:
        return True
    try:
        return bool(value != value)
    except (TypeError, ValueError):   # pandas' NA answers a comparison with NA
        return True


def txt(value) -> str:
    """Text of a cell for people: empty for None, NaN and missing values."""
    if value is None:
        return ""
    try:
        if value != value:   # NaN, NaT
            return ""
    except (TypeError, ValueError):
        return ""
    text = str(value)
    return "" if text in ("<NA>", "NaT", "nan") else text


def timefmt(value) -> str:
    import datetime as dt

    if isinstance(value, (int, float)):
        return dt.datetime.fromtimestamp(value).strftime("%Y-%m-%d %H:%M:%S")
    return txt(value)


def _environment():
    import jinja2

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(HERE / "templates")), autoescape=True,
                             undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    env.filters["fmt"] = fmt
    env.filters["txt"] = txt
    env.filters["timefmt"] = timefmt
    return env


_TEMPLATES = None


def templates():
    global _TEMPLATES
    if _TEMPLATES is None:
        from starlette.templating import Jinja2Templates

        _TEMPLATES = Jinja2Templates(env=_environment())
    return _TEMPLATES


def catalog_of(request):
    return request.app.state.catalog


def preset_of(request) -> str:
    units = request.query_params.get("units") or request.cookies.get("motorshelf_units") or "metric"
    units = "metric" if units == "datasheet" else units    # the older name of the preset
    return units if units in PRESETS else "metric"


def person_of(request, given=None) -> str:
    text = " ".join(str(given or "").split()) or request.cookies.get(PERSON_COOKIE, "")
    return text[:200]


def render(request, name: str, context: dict | None = None, status_code: int = 200, headers=None):
    """A page from ``templates/name`` (autoescaped), with the form token and the person."""
    ctx = dict(context or {})
    token = csrf_token(request)
    ctx.setdefault("csrf", token)
    ctx.setdefault("person", person_of(request))
    ctx.setdefault("units", preset_of(request))
    ctx.setdefault("presets", PRESETS)
    ctx.setdefault("token_mode", bool(request.app.state.token))
    ctx.setdefault("catalogue_path", str(request.app.state.catalog.path))
    ctx.setdefault("writing", request.app.state.catalog.store.writing)
    response = templates().TemplateResponse(request, name, ctx, status_code=status_code, headers=headers)
    if request.cookies.get(CSRF_COOKIE) != token:
        response.set_cookie(CSRF_COOKIE, token, httponly=True, samesite="strict", path="/")
    if request.query_params.get("units") in PRESETS:
        response.set_cookie("motorshelf_units", request.query_params["units"], samesite="strict", path="/")
    return response


def problem_lines(exc) -> list[str]:
    """The ``error:`` lines the command line prints for ``exc`` (see ``catalog.cli.handle_errors``)."""
    problems = list(getattr(exc, "problems", None) or [])
    lines = [f"error: {p}" for p in problems]
    if not problems or len(problems) > 1:
        lines.append(f"error: {exc.message}")
    return lines


def error_payload(exc) -> dict:
    problems = list(getattr(exc, "problems", None) or [])
    out = {"error": exc.message, "problems": [str(p) for p in problems], "lines": problem_lines(exc)}
    if getattr(exc, "suggestions", None):
        out["suggestions"] = list(exc.suggestions)
    return out


async def read_form(request):
    """The submitted form, after checking its cross-site token (:class:`CsrfRefused` otherwise)."""
    form = await request.form(max_files=MAX_FORM_FILES, max_fields=400)
    check_csrf(request, form)
    return form


async def in_thread(func, *args, **kwargs):
    """Run a blocking catalogue call in the thread pool (the event loop keeps serving)."""
    from starlette.concurrency import run_in_threadpool

    return await run_in_threadpool(func, *args, **kwargs)
