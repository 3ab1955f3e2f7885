"""Tests for bodycensus.dashboard.error_pages: one error shape for every error, JSON under /api
and a page elsewhere, the status and code taken from the domain's error tree."""

from __future__ import annotations

from collections.abc import Iterator

import httpx
import pytest
from fastapi import FastAPI
from web_support import live_server

from bodycensus.dashboard.error_pages import install_error_handlers
from bodycensus.errors import InputError, NotFound, StorageError


def _app() -> FastAPI:
    app = FastAPI()
    install_error_handlers(app)

    @app.get("/api/missing")
    @app.get("/page/missing")
    def missing() -> None:
        raise NotFound("no catalogue 'x'; GET /api/catalogues lists them")

    @app.get("/api/bad-file")
    def bad_file() -> None:
        raise InputError("line 3: 9 fields\nbut the header has 8")

    @app.get("/api/full")
    def full() -> None:
        raise StorageError("the disk of the data directory is full; free space and try again")

    @app.get("/api/crash")
    def crash() -> None:
        raise RuntimeError("secret internal detail")

    @app.get("/api/number")
    def number(n: int) -> int:
        return n

    return app


@pytest.fixture(scope="module")
def client() -> Iterator[httpx.Client]:
    """The app in uvicorn on 127.0.0.1 (a crash must reach the handlers as in production)."""
    with live_server(_app()) as base, httpx.Client(base_url=base, timeout=10, headers={
            "Connection": "close"}) as http:  # a crash ends its connection: one per request
        yield http


@pytest.mark.parametrize(("path", "status", "code"), [
    ("/api/missing", 404, "not_found"), ("/api/bad-file", 422, "bad_input"),
    ("/api/full", 507, "storage"), ("/api/crash", 500, "internal"),
    ("/api/number?n=x", 422, "bad_input"), ("/api/nowhere", 404, "not_found"),
])
def test_api_errors_are_json_with_one_line(client: httpx.Client, path: str, status: int,
                                            code: str) -> None:
    response = client.get(path)
    assert response.status_code == status
    body = response.json()
    assert set(body) == {"error", "detail"} and body["error"] == code
    assert "\n" not in body["detail"] and body["detail"]


def test_an_internal_error_hides_its_detail(client: httpx.Client) -> None:
    assert "secret" not in client.get("/api/crash").text


def test_a_page_error_is_not_json(client: httpx.Client) -> None:
    response = client.get("/page/missing")
    assert response.status_code == 404
    assert "json" not in response.headers["content-type"]
    assert "no catalogue 'x'" in response.text  # no template here: the plain-text fallback
