"""The domain errors of the web layer and the one handler that renders every error.

    BodycensusError            500 internal  (never raised on purpose)
     +-- NotFound              404 not_found
     +-- BadInput              400 bad_input (422 for a file or body that cannot be used)
     +-- Conflict              409 conflict  (e.g. a catalogue that is not ready yet)
     +-- TooLarge              413 too_large

``ingest.IngestError``, ``schema.SchemaError`` and the unit and family parsing errors become
``BadInput`` (422); starlette's HTTP errors and request-validation errors get the same shape. Paths under ``/api`` answer JSON
``{"error": code, "detail": one line}``; others render the ``error.html`` template (plain text
when the template is missing).
"""

from __future__ import annotations

import logging
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, PlainTextResponse, Response
from starlette.exceptions import HTTPException

from bodycensus.science.families import FamilyMappingError
from bodycensus.input.ingest import IngestError
from bodycensus.input.schema import SchemaError
from bodycensus.science.units import UnknownUnitError

log = logging.getLogger(__name__)
_MAX_DETAIL = 300
INPUT_ERRORS: tuple[type[Exception], ...] = (IngestError, SchemaError, UnknownUnitError,
                                              FamilyMappingError)


class BodycensusError(Exception):
    """Base of the web layer's errors; ``status`` and ``code`` decide the answer."""

    status = 500
    code = "internal"

    def __init__(self, detail: str, status: int | None = None) -> None:
        super().__init__(detail)
        self.detail = detail
        if status is not None:
            self.status = status


class NotFound(BodycensusError):
    """A catalogue, body or view that does not exist."""

    status, code = 404, "not_found"


class BadInput(BodycensusError):
    """A parameter, file or request body that cannot be used; the detail says what to do."""

    status, code = 400, "bad_input"


class Conflict(BodycensusError):
    """A request that does not fit the current state, e.g. findings of a catalogue still ingesting."""

    status, code = 409, "conflict"


class TooLarge(BodycensusError):
    """An upload or decompressed file past a configured limit."""

    status, code = 413, "too_large"


_HTTP_CODES = {400: "bad_input", 401: "unauthorised", 403: "forbidden", 404: "not_found",
               405: "method_not_allowed", 409: "conflict", 413: "too_large",
               415: "unsupported_media_type", 422: "bad_input"}


def one_line(text: Any) -> str:
    """``text`` squeezed onto one short line, for the ``detail`` of an error."""
    flat = " ".join(str(text).split())
    return flat if len(flat) <= _MAX_DETAIL else flat[: _MAX_DETAIL - 1] + "…"


def as_domain_error(exc: Exception) -> BodycensusError | None:
    """The BodycensusError that ``exc`` stands for, if it is one of ours or a bad-input error."""
    if isinstance(exc, BodycensusError):
        return exc
    if isinstance(exc, INPUT_ERRORS):
        return BadInput(str(exc), status=422)
    return None


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
    """Our errors and ingest/schema errors."""
    err = as_domain_error(exc) or BodycensusError("unexpected error")
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
    err = as_domain_error(exc)
    if err is not None:
        return error_response(request, err.status, err.code, err.detail)
    return error_response(request, 500, "internal", "unexpected server error; see the server log")


def install_error_handlers(app: FastAPI) -> None:
    """Register the one error shape on ``app``."""
    for kind in (BodycensusError, *INPUT_ERRORS):
        app.add_exception_handler(kind, _domain_handler)
    app.add_exception_handler(HTTPException, _http_handler)
    app.add_exception_handler(RequestValidationError, _validation_handler)
    app.add_exception_handler(Exception, _internal_handler)
