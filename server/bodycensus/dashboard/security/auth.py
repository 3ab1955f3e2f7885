"""Access tokens: the login page, the session cookie and the credential check of each request.

When the server has a token, a request gets in with ``Authorization: Bearer <token>`` (API
clients) or with the session cookie the login page sets (browsers). The cookie holds an HMAC of
the token, never the token itself, so a copied cookie does not reveal it; every comparison is
``hmac.compare_digest`` of two HMACs (equal length, constant time).
"""

from __future__ import annotations

import asyncio
import hashlib
import hmac
from typing import Annotated, Literal
from urllib.parse import quote, urlsplit

from fastapi import APIRouter, Form, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from starlette.datastructures import Headers

COOKIE = "bodycensus_session"
_SESSION_MESSAGE = b"bodycensus session v1"
FAILED_LOGIN_DELAY = 0.5  # seconds; slows guessing through the login form (common practice)
Credential = Literal["bearer", "cookie"]
router = APIRouter(include_in_schema=False)


def session_value(token: str) -> str:
    """The cookie value for ``token``: HMAC-SHA256 keyed by the token over a fixed message."""
    return hmac.new(token.encode(), _SESSION_MESSAGE, hashlib.sha256).hexdigest()


def token_matches(given: str, token: str) -> bool:
    """Whether ``given`` is the token, compared in constant time."""
    return hmac.compare_digest(session_value(given), session_value(token))


def _cookie(headers: Headers, name: str) -> str | None:
    """One cookie's value from the Cookie header."""
    for part in headers.get("cookie", "").split(";"):
        key, _, value = part.strip().partition("=")
        if key == name:
            return value
    return None


def credential(headers: Headers, token: str) -> Credential | None:
    """How the request proves it knows ``token``: a bearer header, the session cookie, or not."""
    scheme, _, given = headers.get("authorization", "").partition(" ")
    if scheme.lower() == "bearer" and given and token_matches(given.strip(), token):
        return "bearer"
    cookie = _cookie(headers, COOKIE)
    if cookie and hmac.compare_digest(cookie.encode(), session_value(token).encode()):
        return "cookie"
    return None


def safe_next(target: str | None) -> str:
    """``target`` if it is a path on this server, else ``/`` (no open redirect)."""
    if not target or not target.startswith("/") or target.startswith("//"):
        return "/"
    if "\\" in target or any(ord(ch) < 0x20 or ord(ch) == 0x7F for ch in target):
        return "/"
    parts = urlsplit(target)
    return target if not parts.scheme and not parts.netloc else "/"


def login_url(path_and_query: str) -> str:
    """The login page that leads back to ``path_and_query`` afterwards."""
    return "/login?next=" + quote(safe_next(path_and_query), safe="/")


def _login_page(request: Request, target: str, error: str | None, status: int) -> Response:
    """Render the login form (the front end's frame, our template)."""
    return request.app.state.templates.TemplateResponse(
        request, "login.html", {"screen": "login", "next": target, "error": error},
        status_code=status)


@router.get("/login", response_class=HTMLResponse)
def login_form(request: Request, next: str = "/") -> Response:
    """The login page; straight on to ``next`` when no token is needed or already logged in."""
    token, target = request.app.state.settings.token, safe_next(next)
    if token is None or credential(request.headers, token) is not None:
        return RedirectResponse(target, status_code=303)
    return _login_page(request, target, None, 200)


@router.post("/login", response_class=HTMLResponse)
async def login(request: Request, token: Annotated[str, Form(max_length=4096)] = "",
                next: Annotated[str, Form(max_length=4096)] = "/") -> Response:
    """Check the posted token; on success set the session cookie and go on to ``next``."""
    expected, target = request.app.state.settings.token, safe_next(next)
    if expected is None:
        return RedirectResponse(target, status_code=303)
    if not token_matches(token, expected):
        await asyncio.sleep(FAILED_LOGIN_DELAY)
        return _login_page(request, target, "That token is not right; ask whoever started "
                                            "the server for it.", 401)
    response = RedirectResponse(target, status_code=303)
    response.set_cookie(COOKIE, session_value(expected), httponly=True, samesite="strict",
                        path="/", secure=request.url.scheme == "https")
    return response
