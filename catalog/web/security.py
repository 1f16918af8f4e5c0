"""Who may talk to the server: the bind rules, the team token, cross-site form protection.

* A server bound to a loopback address (127.0.0.0/8, ::1, localhost) needs no token;
  its requests must then name a loopback host (``Host`` header), so a web page of
  another site cannot reach it through a name that resolves to this machine
  (DNS rebinding).
* Any other bind needs the team token (``--token`` or ``$MOTORSHELF_TOKEN``); with a
  token every request but the login page and the static files must carry it: the
  ``Authorization: Bearer`` header (scripts, the JSON API) or the session cookie the
  login page sets (browsers).  The cookie holds a keyed hash of the token, never the
  token itself.
* Forms are protected by a double-submit token: a random value in a ``SameSite=Strict``
  cookie that every form (and every htmx request, as a header) must send back.
* Every response carries headers that keep pages out of frames, stop content sniffing
  and limit scripts, styles and images to the server's own (the vendored htmx).
"""
from __future__ import annotations

__all__ = ["is_loopback", "Guard", "session_value", "CSRF_COOKIE", "AUTH_COOKIE", "PERSON_COOKIE",
           "check_csrf", "csrf_token", "CsrfRefused"]

import hashlib
import hmac
import ipaddress
import json
import secrets
from urllib.parse import quote

CSRF_COOKIE = "motorshelf_csrf"
AUTH_COOKIE = "motorshelf_session"
PERSON_COOKIE = "motorshelf_person"

#: Paths reachable without the token (the login form and the page's own files).
OPEN_PATHS = ("/login", "/static/")

SECURITY_HEADERS = [
    (b"x-content-type-options", b"nosniff"),
    (b"x-frame-options", b"DENY"),
    (b"referrer-policy", b"same-origin"),
    (b"content-security-policy",
     b"default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; img-src 'self' data:; "
     b"object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'"),
]


def is_loopback(host: str) -> bool:
    """True for ``localhost`` and addresses of the loopback range (127.0.0.0/8, ::1)."""
    name = host.strip().strip("[]").lower()
    if name == "localhost" or name.endswith(".localhost"):
        return True
    try:
        return ipaddress.ip_address(name).is_loopback
    except ValueError:
        return False


def session_value(token: str) -> str:
    """The session cookie of ``token``: a keyed hash, so the cookie never holds the token."""
    return hmac.new(token.encode("utf-8"), b"motorshelf session v1", hashlib.sha256).hexdigest()


def _cookies(headers) -> dict:
    from starlette.requests import cookie_parser

    return cookie_parser(headers.get("cookie", ""))


def _host_name(host_header: str) -> str:
    host = host_header.strip()
    if host.startswith("["):
        return host[1:host.find("]")] if "]" in host else host
    return host.rsplit(":", 1)[0] if host.count(":") == 1 else host


class Guard:
    """ASGI middleware: host check (loopback binds), token check (when a token is set),
    security headers on every response."""

    def __init__(self, app, token: str | None, loopback_only: bool):
        self.app = app
        self.token = token
        self.session = session_value(token) if token else None
        self.loopback_only = loopback_only

    def _authorised(self, headers) -> bool:
        auth = headers.get("authorization", "")
        if auth[:7].lower() == "bearer " and hmac.compare_digest(auth[7:].strip().encode(), self.token.encode()):
            return True
        cookie = _cookies(headers).get(AUTH_COOKIE, "")
        return bool(cookie) and hmac.compare_digest(cookie.encode(), self.session.encode())

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            return await self.app(scope, receive, send)
        from starlette.datastructures import Headers

        headers = Headers(scope=scope)
        path = scope.get("path", "")

        async def send_secured(message):
            if message["type"] == "http.response.start":
                message["headers"] = list(message.get("headers", [])) + SECURITY_HEADERS
            await send(message)

        if self.loopback_only and not is_loopback(_host_name(headers.get("host", ""))):
            return await self._refuse(scope, receive, send_secured, 400, "this server answers only to "
                                      "localhost (it was started without a team token); open it as "
                                      "http://127.0.0.1:PORT/")
        if self.token and not path.startswith(OPEN_PATHS) and not self._authorised(headers):
            if path.startswith("/api/") or scope.get("method") not in ("GET", "HEAD"):
                return await self._refuse(scope, receive, send_secured, 401,
                                          "the team token is needed: send 'Authorization: Bearer TOKEN' "
                                          "or sign in at /login")
            query = scope.get("query_string", b"").decode("latin-1")
            target = path + ("?" + query if query else "")
            from starlette.responses import RedirectResponse

            return await RedirectResponse(f"/login?next={quote(target, safe='')}", status_code=303)(
                scope, receive, send_secured)
        return await self.app(scope, receive, send_secured)

    @staticmethod
    async def _refuse(scope, receive, send, status: int, message: str):
        from starlette.responses import Response

        body = json.dumps({"error": message, "lines": [f"error: {message}"]}).encode()
        headers = {"content-type": "application/json"}
        if status == 401:
            headers["www-authenticate"] = 'Bearer realm="motorshelf"'
        await Response(body, status_code=status, headers=headers)(scope, receive, send)


class CsrfRefused(Exception):
    """A form came without the matching cross-site token."""


def csrf_token(request) -> str:
    """The request's form token: the cookie's, or a new one (set on the response by the page)."""
    value = request.cookies.get(CSRF_COOKIE)
    if value and len(value) >= 20:
        return value
    if not getattr(request.state, "new_csrf", None):
        request.state.new_csrf = secrets.token_urlsafe(24)
    return request.state.new_csrf


def check_csrf(request, form) -> None:
    """Raise :class:`CsrfRefused` unless the form (or the ``X-CSRF-Token`` header) sends back
    the cookie's token."""
    cookie = request.cookies.get(CSRF_COOKIE, "")
    sent = (form.get("csrf") if form is not None else None) or request.headers.get("x-csrf-token", "")
    if not cookie or not isinstance(sent, str) or not hmac.compare_digest(cookie.encode(), sent.encode()):
        raise CsrfRefused()
