"""Cross-site request checks, security headers, formula-safe CSV (API export and
``check --format csv``), and the upload limits set by ``serve``'s flags on a real server."""

from __future__ import annotations

import csv
import gzip
import io
import os
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import polars as pl
import pytest
from web_support import (
    SyncClient,
    api_settings,
    asgi_client,
    assert_error,
    data_entries,
    free_port,
    upload,
    wait_done,
)

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.settings import Settings

OWN = "http://127.0.0.1"  # the base URL of asgi_client: this server's own origin
EVIL = "http://evil.example"
TOKEN = "s3cret-token-for-tests"
HYPERLINK = '=HYPERLINK("http://example.invalid","x")'
FORMULA_CSV = (
    'id,name,type,parent,mass [earth_mass],radius_km\n'
    '"=HYPERLINK(""http://example.invalid"",""x"")",=cmd|\' /C calc\'!A0,Rocky world,,10,2000\n'
    "-7,Minus,+label,,-1,6371\n"
    "@at,Tab,\tRocky world,,-2,6371\n"
    "ok,Fine,Rocky world,,1,6371\n")


@pytest.fixture(scope="module")
def served(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[SyncClient, str, Path]]:
    """An open (no token) app with one ready catalogue whose ids and labels look like formulas."""
    data_dir = tmp_path_factory.mktemp("sec")
    with asgi_client(create_app(api_settings(data_dir))) as client:
        cat_id = upload(client, "formulas.csv", FORMULA_CSV.encode(), auto=True).json()["id"]
        assert wait_done(client, cat_id)["status"] == "ready"
        yield client, cat_id, data_dir


# --- cross-site requests -------------------------------------------------------------------


@pytest.mark.parametrize("headers", [
    {"Origin": EVIL}, {"Origin": "null"}, {"Origin": "http://127.0.0.1.evil.example"},
    {"Referer": f"{EVIL}/page"}, {"Sec-Fetch-Site": "cross-site"},
    {"Origin": OWN, "Sec-Fetch-Site": "cross-site"},
], ids=["origin", "null-origin", "suffix-origin", "referer", "fetch-metadata", "both"])
def test_cross_site_state_changes_are_refused(served: tuple[SyncClient, str, Path],
                                              headers: dict[str, str]) -> None:
    client, cat_id, data_dir = served
    before = data_entries(data_dir)
    form = client.post("/api/catalogues", files={"file": ("x.csv", b"id\na\n")}, headers=headers)
    assert "refused" in assert_error(form, 403, "forbidden")["detail"]
    plain = client.post("/api/views", headers={**headers, "Content-Type": "text/plain"},
                        content=f'{{"catalogue": "{cat_id}", "title": "t"}}')
    assert_error(plain, 403, "forbidden")
    assert_error(client.delete(f"/api/catalogues/{cat_id}", headers=headers), 403, "forbidden")
    assert_error(client.post(f"/api/catalogues/{cat_id}/mapping", json={}, headers=headers),
                 403, "forbidden")
    decide = {"scope": "label", "status": "accepted", "items": [{"rule": "r", "target": "t"}]}
    for path, body in ((f"/api/catalogues/{cat_id}/decisions", decide),
                       (f"/api/catalogues/{cat_id}/decisions/key", {"key": "k"}),
                       (f"/api/catalogues/{cat_id}/decisions/import", {"toml": "format = 1"})):
        assert_error(client.post(path, json=body, headers=headers), 403, "forbidden")
    assert client.get(f"/api/catalogues/{cat_id}/decisions").json()["decisions"] == []
    assert data_entries(data_dir) == before
    assert client.get(f"/api/catalogues/{cat_id}", headers=headers).status_code == 200  # reads


def test_same_origin_and_headerless_clients_may_post(served: tuple[SyncClient, str, Path]
                                                    ) -> None:
    client, cat_id, _ = served
    for headers in ({"Origin": OWN}, {"Referer": f"{OWN}/catalogues/{cat_id}"}, {}):
        saved = client.post("/api/views", json={"catalogue": cat_id, "title": "t"},
                            headers=headers)
        assert saved.status_code == 201, saved.text


@pytest.fixture(scope="module")
def guarded(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[SyncClient, str]]:
    """An app with a token, and the session cookie that its login page sets."""
    settings = Settings(data_dir=tmp_path_factory.mktemp("guarded"), token=TOKEN, workers=1)
    with asgi_client(create_app(settings)) as client:
        login = client.post("/login", data={"token": TOKEN, "next": "/"},
                            headers={"Origin": OWN})
        assert login.status_code == 303
        cookie = login.headers["set-cookie"].split(";")[0]
        client.client.cookies.clear()
        yield client, cookie


def test_cookie_api_calls_need_json_or_a_custom_header(guarded: tuple[SyncClient, str]) -> None:
    client, cookie = guarded
    same = {"Cookie": cookie, "Origin": OWN}
    source = {"file": ("c.csv", b"id,mass [kg],radius [m]\na,1e20,1e5\n")}
    refused = client.post("/api/catalogues", files=source, headers=same)
    assert "X-Requested-With" in assert_error(refused, 403, "forbidden")["detail"]
    accepted = client.post("/api/catalogues", files=source, params={"auto": "1"},
                           headers={**same, "X-Requested-With": "XMLHttpRequest"})
    assert accepted.status_code == 202, accepted.text
    cat_id = accepted.json()["id"]
    client.client.headers["Cookie"] = cookie
    try:
        assert wait_done(client, cat_id)["status"] == "ready"
    finally:
        del client.client.headers["Cookie"]
    view = client.post("/api/views", json={"catalogue": cat_id, "title": "t"}, headers=same)
    assert view.status_code == 201, view.text  # the dashboard's own JSON fetch
    decide = ('{"scope": "label", "status": "accepted", "items": [{"rule": "r", '
              '"target": "t"}]}')
    as_form = client.post(f"/api/catalogues/{cat_id}/decisions", content=decide,
                          headers={**same, "Content-Type": "text/plain"})
    assert "X-Requested-With" in assert_error(as_form, 403, "forbidden")["detail"]
    as_json = client.post(f"/api/catalogues/{cat_id}/decisions", content=decide,
                          headers={**same, "Content-Type": "application/json"})
    assert as_json.status_code == 200, as_json.text  # triage.js posts JSON
    assert_error(client.delete(f"/api/catalogues/{cat_id}", headers=same), 403, "forbidden")
    assert_error(client.post("/api/catalogues", files=source,
                             headers={**same, "Origin": EVIL, "X-Requested-With": "x"}),
                 403, "forbidden")


def test_bearer_clients_are_exempt(guarded: tuple[SyncClient, str]) -> None:
    client, _ = guarded
    bearer = {"Authorization": f"Bearer {TOKEN}", "Origin": EVIL}
    accepted = client.post("/api/catalogues", files={"file": ("b.csv", b"id,mass [kg]\na,1\n")},
                           params={"auto": "1"}, headers=bearer)
    assert accepted.status_code == 202, accepted.text


def test_login_from_another_site_is_refused(guarded: tuple[SyncClient, str]) -> None:
    client, _ = guarded
    login = client.post("/login", data={"token": TOKEN, "next": "/"}, headers={"Origin": EVIL})
    assert_error(login, 403, "forbidden")
    assert "set-cookie" not in login.headers


# --- security headers ----------------------------------------------------------------------


def test_every_answer_carries_the_security_headers(served: tuple[SyncClient, str, Path]) -> None:
    client, cat_id, _ = served
    for path in ("/", f"/catalogues/{cat_id}", "/api/catalogues", "/static/app.css",
                 "/catalogues/nope1234", "/login", "/api/nothing"):
        headers = client.get(path).headers
        csp = {part.split()[0]: part.split()[1:] for part in
               headers["content-security-policy"].split("; ")}
        assert csp["script-src"][0] == "'self'" and "'unsafe-inline'" not in csp["script-src"]
        assert "'unsafe-eval'" not in csp["script-src"] and csp["object-src"] == ["'none'"]
        assert csp["frame-ancestors"] == ["'none'"] and csp["default-src"] == ["'self'"]
        assert headers["x-content-type-options"] == "nosniff", path
        assert headers["x-frame-options"] == "DENY"


# --- formula-safe CSV ----------------------------------------------------------------------


def _assert_formula_safe(text: str) -> None:
    """Every text cell that would start a formula got a ', and numbers stayed numbers."""
    rows = list(csv.DictReader(io.StringIO(text)))
    assert rows, text
    cells = [v for r in rows for k, v in r.items() if k not in ("value", "limit", "margin")]
    assert not [c for c in cells if c[:1] in ("=", "+", "-", "@", "\t", "\r")], cells
    bodies = {r["body"] for r in rows}
    assert "'" + HYPERLINK in bodies and "'-7" in bodies
    assert "'+label" in {r["label"] for r in rows}
    frame = pl.read_csv(io.StringIO(text))
    assert frame.schema["value"] == pl.Float64 and frame["value"].min() < 0  # -1 Earth mass


def test_csv_export_neutralises_formulas(served: tuple[SyncClient, str, Path]) -> None:
    client, cat_id, _ = served
    response = client.get(f"/api/catalogues/{cat_id}/findings.csv")
    assert response.status_code == 200
    _assert_formula_safe(response.text)


def test_check_csv_neutralises_formulas_the_same_way(tmp_path: Path,
                                                     served: tuple[SyncClient, str, Path]
                                                     ) -> None:
    source = tmp_path / "formulas.csv"
    source.write_text(FORMULA_CSV, encoding="utf-8")
    done = subprocess.run([sys.executable, "-m", "bodycensus", "check", str(source), "--format",
                           "csv", "--quiet"], capture_output=True, text=True, timeout=120,
                          check=False)
    assert done.returncode == 0, done.stderr
    _assert_formula_safe(done.stdout)
    client, cat_id, _ = served
    exported = pl.read_csv(io.BytesIO(client.get(f"/api/catalogues/{cat_id}/findings.csv"
                                                 ).content))
    checked = pl.read_csv(io.StringIO(done.stdout))
    assert sorted(checked["body"].to_list()) == sorted(exported["body"].to_list())


# --- limits set on the command line, on a real server --------------------------------------


@pytest.fixture(scope="module")
def limited(tmp_path_factory: pytest.TempPathFactory) -> Iterator[httpx.Client]:
    """``bodycensus serve`` in a subprocess on 127.0.0.1 with tiny limits from its flags."""
    port, data_dir = free_port(), tmp_path_factory.mktemp("limited")
    env = {k: v for k, v in os.environ.items() if k != "BODYCENSUS_TOKEN"}
    server = subprocess.Popen(
        [sys.executable, "-m", "bodycensus", "serve", "--host", "127.0.0.1", "--port", str(port),
         "--data-dir", str(data_dir), "--max-upload-mb", "1", "--max-decompressed-mb", "1",
         "--max-rows", "10", "--max-columns", "5"],
        env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        with httpx.Client(base_url=f"http://127.0.0.1:{port}", timeout=30) as client:
            deadline = time.monotonic() + 30
            while True:
                try:
                    client.get("/api/catalogues")
                    break
                except httpx.TransportError:
                    assert time.monotonic() < deadline and server.poll() is None
                    time.sleep(0.1)
            yield client
    finally:
        server.terminate()
        server.wait(timeout=20)


def _rows(n: int, columns: int = 3) -> bytes:
    head = ",".join(["id", "mass [kg]", "radius [m]", *[f"x{i}" for i in range(columns - 3)]])
    return (head + "\n" + "".join(f"b{i},1e20,1e5{',1' * (columns - 3)}\n"
                                  for i in range(n))).encode()


def _refused_or_failed(client: httpx.Client, response: httpx.Response, status: int) -> str:
    """The reason a limit stopped the file: at upload (``status``) or during the run."""
    if response.status_code == status:
        return assert_error(response, status, "too_large")["detail"]
    assert response.status_code == 202, response.text
    done = wait_done(client, response.json()["id"])
    assert done["status"] == "failed", done
    return done["error"]


def test_serve_flags_set_the_upload_limits(limited: httpx.Client) -> None:
    small = upload(limited, "small.csv", _rows(5), auto=True)
    assert wait_done(limited, small.json()["id"])["status"] == "ready"
    assert_error(upload(limited, "big.csv", b"id\n" + b"x" * (1 << 20) + b"\n"), 413,
                 "too_large")
    assert_error(upload(limited, "wide.csv", _rows(2, columns=6)), 413, "too_large")
    rows = _refused_or_failed(limited, upload(limited, "long.csv", _rows(11), auto=True), 413)
    assert "10" in rows and "rows" in rows
    bomb = gzip.compress(_rows(5) + b"\n" * (2 << 20))
    assert len(bomb) < 1 << 20
    reason = _refused_or_failed(limited, upload(limited, "bomb.csv.gz", bomb, auto=True), 413)
    assert "bomb.csv.gz" in reason or "decompress" in reason


def test_dns_rebinding_host_is_refused_without_a_token(tmp_path: Path) -> None:
    """A page on another site that rebinds its name to 127.0.0.1 arrives with that name in Host:
    a token-less server answers only loopback names (and --allow-host ones)."""
    app = create_app(Settings(data_dir=tmp_path, allowed_hosts=("dash.lab",)))
    with asgi_client(app) as client:
        for host in ("127.0.0.1:8000", "localhost", "[::1]:8000", "dash.lab:8000"):
            assert client.get("/api/catalogues", headers={"Host": host}).status_code == 200, host
        refused = client.get("/api/catalogues", headers={"Host": "rebind.evil.example:8000"})
        assert refused.status_code == 421
        assert refused.json()["error"] == "misdirected"
        assert "--allow-host" in refused.json()["detail"]
