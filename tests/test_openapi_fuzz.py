"""Property-based test of the published OpenAPI schema: schemathesis generates requests for
every operation (valid and invalid parameters and bodies; hypothesis drives schemathesis'
strategies without its pytest plugin) against the real app in uvicorn on
127.0.0.1; none may answer 500, and every error keeps the one error shape. Bounded: a few dozen
examples per operation, each with a deadline."""

from __future__ import annotations

import tempfile
from collections.abc import Iterator
from dataclasses import replace
from pathlib import Path
from typing import Any

import httpx
import pytest
import schemathesis
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from schemathesis import GenerationMode
from web_support import api_settings, live_server, upload, wait_done, write_catalogue

from bodycensus.dashboard.app import create_app

EXAMPLES = 40  # per operation; ~16 operations keep the whole module near half a minute
TOKEN = "fuzzing-token-1234"


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[str, str]]:
    """The app (with a token, so every call also passes the gate) and one ready catalogue."""
    data_dir = tmp_path_factory.mktemp("fuzz")
    app = create_app(replace(api_settings(data_dir), token=TOKEN))
    source = write_catalogue(data_dir.parent / "fuzz.csv", n_planets=30).read_bytes()
    with live_server(app) as base, httpx.Client(base_url=base, timeout=30, headers={
            "Authorization": f"Bearer {TOKEN}"}) as client:
        cat_id = upload(client, "fuzz.csv", source).json()["id"]
        assert wait_done(client, cat_id)["status"] == "ready"
        yield base, cat_id


def _operations() -> list[Any]:
    """Every operation of the schema the app publishes (read from the app itself, so the test
    ids exist before any server runs)."""
    app = create_app(api_settings(Path(tempfile.gettempdir()) / "bodycensus-fuzz-schema"))
    schema = schemathesis.openapi.from_dict(app.openapi())
    return [result.ok() for result in schema.get_all_operations()]


OPERATIONS = _operations()


def _cases(operation: Any) -> st.SearchStrategy[Any]:
    """Valid and invalid requests for one operation (schemathesis' two generation modes)."""
    return st.one_of(operation.as_strategy(GenerationMode.POSITIVE),
                     operation.as_strategy(GenerationMode.NEGATIVE))


@pytest.mark.parametrize("operation", OPERATIONS, ids=lambda op: op.label)
def test_no_operation_answers_500(operation: Any, server: tuple[str, str]) -> None:
    """Hypothesis drives schemathesis' strategies directly (no pytest plugin): any version of
    pytest can run it."""
    base, cat_id = server

    @given(case=_cases(operation))
    @settings(max_examples=EXAMPLES, deadline=5000, derandomize=True, database=None,
              suppress_health_check=list(HealthCheck))
    def check(case: Any) -> None:
        params = case.path_parameters or {}
        if "catalogue_id" in params and case.method != "DELETE" and len(str(case.query)) % 2 == 0:
            params["catalogue_id"] = cat_id  # half the reads reach a real catalogue's data
        response = case.call(base_url=base, headers={"Authorization": f"Bearer {TOKEN}"},
                             timeout=30)
        assert response.status_code < 500, (case.method, case.formatted_path,
                                             response.text[:300])
        if response.status_code >= 400 and "json" in response.headers.get("content-type", ""):
            body = response.json()
            assert set(body) == {"error", "detail"} and "\n" not in body["detail"], body

    check()
