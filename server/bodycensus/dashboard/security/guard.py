"""The gate every request passes: the access token, cross-site request checks, security headers.

A pure ASGI middleware (no body buffering, so uploads still stream). In order:
1. with a token, a request without a credential (``auth.credential``) is answered 401 (API) or
   sent to the login page (pages); the login page and the static files are open (see below);
2. a state-changing request (POST/PUT/PATCH/DELETE) not made with the bearer token must come
   from this server's own origin (``Origin``, else ``Referer``; ``Sec-Fetch-Site: cross-site``
   is refused outright), and an API call authenticated by the cookie must also send JSON or the
   ``X-Requested-With`` header, which a cross-site form cannot;
3. every answer carries a Content-Security-Policy, ``nosniff`` and no-framing headers.

Without a token the server listens on loopback only, and a request must also name a loopback host
(or one allowed with ``--allow-host``) in its Host header: a page on another site that rebinds its
own DNS name to 127.0.0.1 (DNS rebinding) would otherwise read the catalogues as same-origin.
With a token the HttpOnly cookie, bound to the real host name, already shuts that door.

Static files stay open: they are the package's own code and styles, the same for every install,
and hold no catalogue data; the login page needs its stylesheet before anyone has logged in.
"""

from __future__ import annotations

import html
from urllib.parse import urlsplit

from starlette.datastructures import Headers
from starlette.responses import HTMLResponse, JSONResponse, RedirectResponse, Response
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from bodycensus.dashboard.security.auth import Credential, credential, login_url
from bodycensus.errors import one_line

UNSAFE_METHODS = frozenset({"POST", "PUT", "PATCH", "DELETE"})
OPEN_PATHS = ("/login", "/static/")
LOOPBACK_NAMES = frozenset({"127.0.0.1", "localhost", "::1"})
CUSTOM_HEADER = "x-requested-with"
# No inline script anywhere (listeners live in web/static/*.js); plotly.js needs no eval.
CSP = ("default-src 'self'; "
       "script-src 'self'; "
       "style-src 'self' 'unsafe-inline'; img-src 'self' data: blob:; font-src 'self' data:; "
       "connect-src 'self'; worker-src 'self' blob:; object-src 'none'; base-uri 'none'; "
       "form-action 'self'; frame-ancestors 'none'")
SECURITY_HEADERS = [
    (b"content-security-policy", CSP.encode()),
    (b"x-content-type-options", b"nosniff"),
    (b"x-frame-options", b"DENY"),
    (b"referrer-policy", b"same-origin"),
]


def _error(status: int, code: str, detail: str, headers: dict[str, str] | None = None
           ) -> Response:
    """The house error shape, as JSON."""
    return JSONResponse({"error": code, "detail": one_line(detail)}, status_code=status,
                        headers=headers)


def host_name(headers: Headers) -> str:
    """The Host header's name, without the port and IPv6 brackets, lower-cased."""
    host = headers.get("host", "").lower()
    if host.startswith("["):
        return host[1:].split("]", 1)[0]
    return host.rsplit(":", 1)[0] if host.count(":") == 1 else host


def own_origin(scope: Scope, headers: Headers) -> str:
    """This server's origin as the browser sees it: scheme and the Host header."""
    return f"{scope.get('scheme', 'http')}://{headers.get('host', '')}".lower()


def cross_site_problem(scope: Scope, headers: Headers, how: Credential | None) -> str | None:
    """Why a state-changing request looks cross-site (None when it does not)."""
    if how == "bearer":
        return None
    if headers.get("sec-fetch-site") == "cross-site":
        return "cross-site request refused; use the dashboard itself or an API token"
    origin, referer = headers.get("origin"), headers.get("referer")
    if origin is not None:
        if origin.lower() != own_origin(scope, headers):
            return f"request from origin {origin} refused; only this server's pages may post"
    elif referer:
        parts = urlsplit(referer)
        if f"{parts.scheme}://{parts.netloc}".lower() != own_origin(scope, headers):
            return "request from another site refused; only this server's pages may post"
    if how == "cookie" and scope["path"].startswith("/api") and not _scripted(headers):
        return ("API calls with the session cookie must send JSON or the X-Requested-With "
                "header; scripts may use Authorization: Bearer instead")
    return None


def _scripted(headers: Headers) -> bool:
    """Whether a request could only have been made by a script (not by a plain HTML form)."""
    media = headers.get("content-type", "").split(";")[0].strip().lower()
    return bool(headers.get(CUSTOM_HEADER)) or media == "application/json"


def _bounce(target: str) -> Response:
    """A page that reopens ``target`` from this site, so a SameSite=Strict cookie is sent."""
    url = html.escape(target, quote=True)
    return HTMLResponse(f'<!doctype html><meta http-equiv="refresh" content="0;url={url}">'
                        f'<title>bodycensus</title><a href="{url}">Continue</a>')


def _unauthorised(scope: Scope, headers: Headers) -> Response:
    """401 for the API and non-GET requests; the login page (or a same-site bounce) for pages."""
    path = scope["path"]
    if path.startswith("/api") or scope["method"] not in ("GET", "HEAD"):
        return _error(401, "unauthorised", "this server needs its access token: send "
                      "Authorization: Bearer <token>, or log in at /login",
                      {"WWW-Authenticate": "Bearer"})
    raw = scope.get("raw_path") or path.encode()
    query = scope.get("query_string", b"")
    target = (raw + b"?" + query if query else raw).decode("latin-1")
    if headers.get("sec-fetch-site") == "cross-site":  # a link followed from another site
        return _bounce(target)
    return RedirectResponse(login_url(target), status_code=303)


class Guard:
    """ASGI middleware: token gate, cross-site request check, security headers (module doc)."""

    def __init__(self, app: ASGIApp, token: str | None,
                 allowed_hosts: frozenset[str] = frozenset()) -> None:
        self.app, self.token = app, token
        self.hosts = LOOPBACK_NAMES | {h.lower() for h in allowed_hosts}

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        send = _with_headers(send)
        headers = Headers(scope=scope)
        if not self.token and host_name(headers) not in self.hosts:
            detail = (f"host '{host_name(headers)}' is not this server's name; open it as "
                      "http://127.0.0.1, or start it with --allow-host NAME")
            await _error(421, "misdirected", detail)(scope, receive, send)
            return
        how = credential(headers, self.token) if self.token else None
        if self.token and how is None and not scope["path"].startswith(OPEN_PATHS):
            await _unauthorised(scope, headers)(scope, receive, send)
            return
        if scope["method"] in UNSAFE_METHODS:
            problem = cross_site_problem(scope, headers, how)
            if problem is not None:
                await _error(403, "forbidden", problem)(scope, receive, send)
                return
        await self.app(scope, receive, send)


def _with_headers(send: Send) -> Send:
    """``send`` that adds the security headers to the response start."""
    async def wrapped(message: Message) -> None:
        if message["type"] == "http.response.start":
            message.setdefault("headers", [])
            present = {name.lower() for name, _ in message["headers"]}
            message["headers"] = [*message["headers"],
                                  *[h for h in SECURITY_HEADERS if h[0] not in present]]
        await send(message)
    return wrapped
