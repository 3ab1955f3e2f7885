"""The one error shape of the web application: handlers that turn every error into JSON
``{"error": code, "detail": one line}`` under ``/api`` and the error page elsewhere.

The domain's errors (``bodycensus.errors``) carry their status and code; starlette's HTTP errors
and FastAPI's request-validation errors get the same shape; anything else is logged and answered
500 without details.
"""

from __future__ import annotations

import logging
from urllib.parse import quote

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, PlainTextResponse, RedirectResponse, Response
from starlette.exceptions import HTTPException

from bodycensus.errors import BodycensusError, NotReady, one_line

log = logging.getLogger(__name__)
_HTTP_CODES = {400: "bad_input", 401: "unauthorised", 403: "forbidden", 404: "not_found",
               405: "method_not_allowed", 409: "conflict", 413: "too_large",
               415: "unsupported_media_type", 422: "bad_input"}


def error_response(request: Request, status: int, code: str, detail: str) -> Response:
    """JSON for ``/api`` paths, the error page otherwise."""
    detail = one_line(detail)
    if request.url.path.startswith("/api"):
        return JSONResponse({"error": code, "detail": detail}, status_code=status)
    return _error_page(request, status, code, detail)


def _error_page(request: Request, status: int, code: str, detail: str) -> Response:
    """Render ``error.html`` with the front end's templates; plain text if that fails."""
    templates = getattr(request.app.state, "templates", None)
    if templates is not None:
        try:
            return templates.TemplateResponse(
                request, "error.html",
                {"status": status, "error": code, "detail": detail}, status_code=status,
            )
        except Exception:  # a missing or broken template must not hide the original error
            log.exception("error page could not be rendered")
    return PlainTextResponse(f"{status} {code}: {detail}", status_code=status)


async def _domain_handler(request: Request, exc: Exception) -> Response:
    """The domain's errors, input errors included; a page of a catalogue that is not ready
    opens the catalogue's own page (its mapping step, progress or failure) instead."""
    err = exc if isinstance(exc, BodycensusError) else BodycensusError("unexpected error")
    if isinstance(err, NotReady) and not request.url.path.startswith("/api"):
        return RedirectResponse(f"/catalogues/{quote(err.catalogue, safe='')}", status_code=303)
    return error_response(request, err.status, err.code, err.detail)


async def _http_handler(request: Request, exc: Exception) -> Response:
    """Starlette's HTTP errors (unknown route, wrong method) in our shape."""
    assert isinstance(exc, HTTPException)
    code = _HTTP_CODES.get(exc.status_code, "error")
    response = error_response(request, exc.status_code, code, str(exc.detail))
    response.headers.update(exc.headers or {})
    return response


async def _validation_handler(request: Request, exc: Exception) -> Response:
    """FastAPI's request validation, reduced to the first problem on one line."""
    assert isinstance(exc, RequestValidationError)
    first = exc.errors()[0] if exc.errors() else {}
    where = ".".join(str(part) for part in first.get("loc", ()))
    return error_response(request, 422, "bad_input", f"{where}: {first.get('msg', 'invalid')}")


async def _internal_handler(request: Request, exc: Exception) -> Response:
    """Anything else: logged with its traceback, answered in the same shape."""
    log.error("unhandled error on %s", request.url.path, exc_info=exc)
    if isinstance(exc, BodycensusError):
        return error_response(request, exc.status, exc.code, exc.detail)
    return error_response(request, 500, "internal", "unexpected server error; see the server log")


def install_error_handlers(app: FastAPI) -> None:
    """Register the one error shape on ``app``."""
    app.add_exception_handler(BodycensusError, _domain_handler)
    app.add_exception_handler(HTTPException, _http_handler)
    app.add_exception_handler(RequestValidationError, _validation_handler)
    app.add_exception_handler(Exception, _internal_handler)
