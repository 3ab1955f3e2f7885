"""The access token: the refusal to listen beyond loopback without one, the gate on every page
and API call, the login page and its cookie, shared view links, and no open redirect."""

from __future__ import annotations

import hashlib
import hmac
import os
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from urllib.parse import parse_qs, quote, urlsplit

import httpx
import pytest
from fastapi.routing import APIRoute
from web_support import (
    SyncClient,
    asgi_client,
    assert_error,
    live_server,
    upload,
    wait_done,
    write_catalogue,
)

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.routes import api, lists, manage, pages
from bodycensus.dashboard.security.auth import COOKIE
from bodycensus.dashboard.settings import Settings

TOKEN = "s3cret-token-for-tests"
BEARER = {"Authorization": f"Bearer {TOKEN}"}
EVIL = ["//evil.example/x", "https://evil.example/", "/\\evil.example", "javascript:alert(1)",
        "\t//evil.example", "/\r\nSet-Cookie:x=1", "http:/evil.example", "evil.example"]


def _serve(*args: str, env_token: str | None = None) -> subprocess.CompletedProcess[str]:
    """``bodycensus serve`` in a subprocess with a clean token environment."""
    env = {k: v for k, v in os.environ.items() if k != "BODYCENSUS_TOKEN"}
    if env_token is not None:
        env["BODYCENSUS_TOKEN"] = env_token
    return subprocess.run([sys.executable, "-m", "bodycensus", "serve", *args], env=env,
                          capture_output=True, text=True, timeout=60, check=False)


@pytest.mark.parametrize("args", [("--host", "0.0.0.0"), ("--host", "192.168.1.20"),
                                  ("--host", "::"), ("--host", "0.0.0.0", "--token", "short")])
def test_serve_refuses_other_hosts_without_a_token(tmp_path: Path, args: tuple[str, ...]) -> None:
    done = _serve(*args, "--data-dir", str(tmp_path / "d"), "--port", "1")
    assert done.returncode == 2, done.stderr
    assert "Traceback" not in done.stderr and len(done.stderr.strip().splitlines()) == 1
    assert done.stderr.startswith("bodycensus serve: ") and "token" in done.stderr
    assert not (tmp_path / "d").exists()  # refused before anything was opened


def test_serve_takes_the_token_from_the_environment(tmp_path: Path,
                                                    monkeypatch: pytest.MonkeyPatch) -> None:
    # no server is started here: nothing in the tests listens beyond 127.0.0.1
    monkeypatch.setenv("BODYCENSUS_TOKEN", TOKEN)
    settings = Settings.from_cli(data_dir=tmp_path, host="0.0.0.0")
    assert settings.token == TOKEN and settings.listen_problem() is None
    monkeypatch.delenv("BODYCENSUS_TOKEN")
    assert "token" in (Settings.from_cli(data_dir=tmp_path, host="0.0.0.0").listen_problem()
                       or "")


@pytest.fixture(scope="module")
def guarded(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[SyncClient, str, str]]:
    """An app with a token and one ready catalogue and saved view (made with the bearer)."""
    data_dir = tmp_path_factory.mktemp("guarded")
    source = write_catalogue(data_dir.parent / "g.csv", n_planets=20).read_bytes()
    settings = Settings(data_dir=data_dir, token=TOKEN, workers=1)
    with asgi_client(create_app(settings)) as client:
        client.client.headers.update(BEARER)
        cat_id = upload(client, "g.csv", source).json()["id"]
        assert wait_done(client, cat_id)["status"] == "ready"
        slug = client.post("/api/views", json={"catalogue": cat_id, "query": "severity=error",
                                               "title": "Broken rows"}).json()["slug"]
        del client.client.headers["Authorization"]
        yield client, cat_id, slug


def _get_paths(cat_id: str, slug: str, system: str) -> list[str]:
    """Every GET route of the app with its path parameters filled in."""
    fill = {"{catalogue_id}": cat_id, "{slug}": slug, "{body_id:path}": "moon-1",
            "{body_id}": "moon-1", "{system:path}": quote(system, safe="")}
    paths = []
    for route in [*api.router.routes, *pages.router.routes, *lists.router.routes,
                  *manage.router.routes, *manage.api.routes]:
        if isinstance(route, APIRoute) and "GET" in route.methods:
            path = route.path
            for key, value in fill.items():
                path = path.replace(key, value)
            paths.append(path + ("?q=moon" if path.endswith("/search") else ""))
    paths.append(create_app(Settings(data_dir=Path("/nonexistent"))).openapi_url or "")
    return paths


def test_every_route_needs_the_token(guarded: tuple[SyncClient, str, str]) -> None:
    client, cat_id, slug = guarded
    systems = client.get(f"/api/catalogues/{cat_id}/systems", headers=BEARER).json()["items"]
    paths = _get_paths(cat_id, slug, systems[0]["system"])
    assert len(paths) > 15 and "/v/" + slug in paths
    assert not [p for p in paths if "{" in p], "a path parameter was left unfilled"
    for path in paths:
        bare = client.get(path)
        if path.startswith("/api"):
            assert_error(bare, 401, "unauthorised")
            assert bare.headers["www-authenticate"] == "Bearer"
        else:
            assert bare.status_code == 303, path
            assert bare.headers["location"].startswith("/login?next=/"), path
        assert client.get(path, headers={"Authorization": "Bearer wrong-token-xx"}
                          ).status_code in (303, 401)
        # a ready catalogue's mapping step sends its reader to the catalogue itself
        expected = 303 if path.endswith("/mapping") else 200
        assert client.get(path, headers=BEARER).status_code == expected, path
    for method, path in (("POST", "/api/catalogues"), ("DELETE", f"/api/catalogues/{cat_id}"),
                         ("POST", "/api/views")):
        assert_error(client.request(method, path), 401, "unauthorised")
    assert client.get(f"/api/catalogues/{cat_id}", headers=BEARER).json()["status"] == "ready"


def test_static_files_are_open(guarded: tuple[SyncClient, str, str]) -> None:
    client, _, _ = guarded
    assert client.get("/static/app.css").status_code == 200
    assert client.get("/static/vendor/plotly.min.js").status_code == 200


def _login(client: SyncClient, token: str, target: str = "/") -> httpx.Response:
    return client.post("/login", data={"token": token, "next": target})


def test_login_sets_an_httponly_strict_cookie_holding_an_hmac(
        guarded: tuple[SyncClient, str, str]) -> None:
    client, _, _ = guarded
    form = client.get("/login?next=/x")
    assert form.status_code == 200 and 'name="token"' in form.text
    assert 'value="/x"' in form.text and 'type="password"' in form.text
    wrong = _login(client, "not-the-token")
    assert wrong.status_code == 401 and "set-cookie" not in wrong.headers
    assert "not right" in wrong.text
    right = _login(client, TOKEN, "/catalogues")
    assert right.status_code == 303 and right.headers["location"] == "/catalogues"
    cookie = right.headers["set-cookie"]
    attributes = {part.strip().split("=")[0].lower() for part in cookie.split(";")}
    assert {"httponly", "samesite", "path"} <= attributes and "samesite=strict" in cookie.lower()
    value = cookie.split(";")[0].split("=", 1)[1]
    assert TOKEN not in cookie
    assert value == hmac.new(TOKEN.encode(), b"bodycensus session v1", hashlib.sha256).hexdigest()
    client.client.cookies.clear()
    assert client.get("/", headers={"Cookie": f"{COOKIE}={value}"}).status_code == 200
    assert client.get("/", headers={"Cookie": f"{COOKIE}={TOKEN}"}).status_code == 303
    assert client.get("/", headers={"Cookie": f"{COOKIE}={value[:-1]}0"}).status_code == 303


def test_a_shared_view_link_leads_to_login_then_to_the_view(
        guarded: tuple[SyncClient, str, str]) -> None:
    client, _, slug = guarded
    client.client.cookies.clear()
    first = client.get(f"/v/{slug}")
    assert first.status_code == 303 and first.headers["location"] == f"/login?next=/v/{slug}"
    login_page = client.get(first.headers["location"])
    assert f'value="/v/{slug}"' in login_page.text
    target = parse_qs(urlsplit(first.headers["location"]).query)["next"][0]
    done = _login(client, TOKEN, target)
    assert done.status_code == 303 and done.headers["location"] == f"/v/{slug}"
    view = client.get(done.headers["location"])  # the client's jar now holds the cookie
    assert view.status_code == 200 and "Broken rows" in view.text
    client.client.cookies.clear()


def test_a_link_followed_from_another_site_reopens_itself_same_site(
        guarded: tuple[SyncClient, str, str]) -> None:
    # A SameSite=Strict cookie is not sent on a cross-site navigation: the page reloads itself
    # from this site (with the cookie, if the browser has one), showing no data meanwhile.
    client, _, slug = guarded
    bounce = client.get(f"/v/{slug}?a=1&b=%3C", headers={"Sec-Fetch-Site": "cross-site"})
    assert bounce.status_code == 200 and "Broken rows" not in bounce.text
    assert f'url=/v/{slug}?a=1&amp;b=%3C"' in bounce.text


@pytest.mark.parametrize("target", EVIL)
def test_login_never_redirects_off_site(guarded: tuple[SyncClient, str, str],
                                        target: str) -> None:
    client, _, _ = guarded
    done = _login(client, TOKEN, target)
    assert done.status_code == 303 and done.headers["location"] == "/"
    assert client.get("/login", params={"next": target}, headers=BEARER
                      ).headers["location"] == "/"
    client.client.cookies.clear()


def test_login_without_a_token_configured_goes_straight_on(tmp_path: Path) -> None:
    with asgi_client(create_app(Settings(data_dir=tmp_path))) as client:
        assert client.get("/login?next=/catalogues/x").headers["location"] == "/catalogues/x"
        assert client.get("/api/catalogues").status_code == 200


def test_a_real_server_with_a_token(tmp_path: Path) -> None:
    settings = Settings(data_dir=tmp_path, token=TOKEN, workers=1)
    with live_server(create_app(settings)) as base, \
            httpx.Client(base_url=base, timeout=30) as client:
        assert_error(client.get("/api/catalogues"), 401, "unauthorised")
        assert client.get("/api/catalogues", headers=BEARER).json() == {"items": []}
        login = client.post("/login", data={"token": TOKEN, "next": "/"},
                            headers={"Origin": base})
        assert login.status_code == 303 and COOKIE in client.cookies
        assert client.get("/").status_code == 200  # the cookie jar carries the session
