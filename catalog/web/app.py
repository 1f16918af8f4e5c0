"""The application factory: ``create_app(db, token=None, host="127.0.0.1")``."""
from __future__ import annotations

__all__ = ["create_app"]

import logging

from ..errors import MotorshelfError, NotFound, StoreBusy, StoreError
from .common import HERE, error_payload, problem_lines, render
from .security import CsrfRefused, Guard, is_loopback

log = logging.getLogger("motorshelf.web")


def _wants_json(request) -> bool:
    return request.url.path.startswith("/api/")


async def _motorshelf_error(request, exc: MotorshelfError):
    from .api_routes import json_response

    if isinstance(exc, StoreBusy):
        status = 503
    elif isinstance(exc, NotFound):
        # an unknown id in the address is 404; named in a body or a form it is a mistake in the input
        status = 404 if request.method in ("GET", "HEAD") else 422
    elif isinstance(exc, StoreError):
        status = 500
    else:
        status = 422
    if _wants_json(request):
        return json_response(error_payload(exc), status)
    if request.headers.get("hx-request"):
        return render(request, "_problems.html", {"lines": problem_lines(exc)}, status_code=status)
    return render(request, "error.html", {"title": "Not found" if status == 404 else "Cannot do that",
                                          "lines": problem_lines(exc),
                                          "suggestions": list(getattr(exc, "suggestions", None) or [])},
                  status_code=status)


async def _csrf_refused(request, exc):
    message = ("the form came without its page's token (an old page, or a request from another site); "
               "reload the page and send the form again")
    if _wants_json(request):
        from .api_routes import json_response

        return json_response({"error": message, "lines": [f"error: {message}"]}, 403)
    return render(request, "error.html", {"title": "Form refused", "lines": [f"error: {message}"],
                                          "suggestions": []}, status_code=403)


async def _not_found(request, exc):
    from starlette.exceptions import HTTPException

    status = exc.status_code if isinstance(exc, HTTPException) else 404
    detail = getattr(exc, "detail", "") or "not found"
    if _wants_json(request):
        from .api_routes import json_response

        return json_response({"error": f"{request.url.path}: {detail}", "lines": []}, status)
    return render(request, "error.html", {"title": detail.capitalize() if isinstance(detail, str) else "Error",
                                          "lines": [f"error: {request.url.path}: {detail}"], "suggestions": []},
                  status_code=status)


async def _internal(request, exc):
    log.exception("internal error on %s %s", request.method, request.url.path, exc_info=exc)
    message = "internal error: the request was not completed; the server's log has the details"
    if _wants_json(request):
        from .api_routes import json_response

        return json_response({"error": message, "lines": [f"error: {message}"]}, 500)
    from starlette.responses import HTMLResponse

    return HTMLResponse(f"<!DOCTYPE html><title>Internal error</title><p>{message}</p>", status_code=500)


def create_app(db, token: str | None = None, host: str = "127.0.0.1", wait: float = 30.0):
    """The ASGI application serving the catalogue ``db``.

    Parameters
    ----------
    db : str or Path
        The catalogue file (created on the first write).
    token : str, optional
        The team token; required on every request when given.  A server bound to a
        non-loopback ``host`` must have one (:class:`ValueError` otherwise).
    host : str
        The address the server binds to; a loopback one (and no token) makes the
        server answer only requests naming a loopback host.
    wait : float
        Seconds a write waits for the catalogue before answering "busy".
    """
    from starlette.applications import Starlette
    from starlette.exceptions import HTTPException
    from starlette.middleware import Middleware
    from starlette.routing import Mount
    from starlette.staticfiles import StaticFiles

    from . import api_routes, pages
    from .jobs import Jobs
    from .served import ServedCatalog

    token = token or None
    if not is_loopback(host) and not token:
        raise ValueError(f"serving on {host} (not a loopback address) needs a team token: --token TOKEN "
                         "or $MOTORSHELF_TOKEN")
    if token is not None and len(token) < 8:
        raise ValueError("the team token is shorter than 8 characters, expected a longer secret")
    import contextlib

    @contextlib.asynccontextmanager
    async def lifespan(app):
        yield
        app.state.jobs.close()   # the uploaded files of finished imports go with the server

    routes = [*api_routes.routes, *pages.routes,
              Mount("/static", app=StaticFiles(directory=str(HERE / "static")), name="static")]
    app = Starlette(
        routes=routes,
        lifespan=lifespan,
        middleware=[Middleware(Guard, token=token, loopback_only=token is None)],
        exception_handlers={MotorshelfError: _motorshelf_error, CsrfRefused: _csrf_refused,
                            HTTPException: _not_found, 404: _not_found, Exception: _internal},
    )
    app.state.catalog = ServedCatalog(db, wait=wait)
    app.state.token = token
    app.state.jobs = Jobs(app.state.catalog)
    app.state.runs = pages.Runs()
    app.state.notes = pages.Notes()
    return app
