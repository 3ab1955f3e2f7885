"""Test support for the web layer: a small catalogue file, an in-process client, a live server.

The catalogue is a real CSV with unit hints in its header and a few planted defects; the
clients run the real app (lifespan, store, ingest threads) either in process through httpx's
ASGITransport or in uvicorn on 127.0.0.1.
"""

from __future__ import annotations

import csv
import functools
import random
import socket
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import anyio.from_thread
import httpx
import uvicorn
from fastapi import FastAPI

from bodycensus.dashboard.settings import Settings

AU_KM = 1.495978707e8  # km; IAU 2012 Resolution B2
JUPITER_RADIUS_KM = 71492.0  # IAU 2015 B3 nominal equatorial radius
GIANT0_RADIUS_KM = 69911.0  # Jupiter's mean radius (JPL SSD), the parent of the moons
FORMULA_LABEL = '=HYPERLINK("http://example.invalid","x")'
HEADER = ["id", "name", "type", "parent", "mass [earth_mass]", "radius_km", "a (AU)",
          "eccentricity", "period [d]"]


def catalogue_rows(n_planets: int = 200, seed: int = 3) -> list[tuple[Any, ...]]:
    """Stars, rocky planets, giants and moons with three planted defects (see module doc)."""
    rng = random.Random(seed)
    rows: list[tuple[Any, ...]] = [
        (f"star-{i}", f"Star {i}", "G2V", "", 332946.0, 695700.0, "", "", "") for i in range(3)]
    for i in range(n_planets):
        m, a = rng.uniform(0.5, 2.0), rng.uniform(0.5, 3.0)
        rows.append((f"rock-{i}", f"Rock {i}", "Rocky world", "star-0", m, 6371.0 * m ** 0.27, a,
                     0.02, 365.25 * a ** 1.5))
    rows.append(("giant-0", "Giant 0", "Gas giant", "star-1", 317.8, GIANT0_RADIUS_KM, 5.2, 0.05,
                 ""))
    for i in range(1, 20):
        rows.append((f"giant-{i}", f"Giant {i}", "Gas giant", "star-1", rng.uniform(100, 900),
                     GIANT0_RADIUS_KM, rng.uniform(2, 10), 0.05, ""))
    for i in range(30):  # moon-0 at 1.05 parent radii: inside the rigid Roche limit (~1.1)
        a_km = GIANT0_RADIUS_KM * 1.05 if i == 0 else JUPITER_RADIUS_KM * rng.uniform(10, 60)
        rows.append((f"moon-{i}", f"Moon {i}", "Icy moon", "giant-0", 1.7e-4, 500.0,
                     a_km / AU_KM, 0.0, ""))
    rows.append(("dense-1", "Dense", "Rocky world", "star-0", 10.0, 2000.0, 1.0, 0.01, ""))
    rows.append(("orphan-1", "+cmd|' /C calc'!A0", FORMULA_LABEL, "nowhere", 1.0, 6371.0, 1.0,
                 0.01, ""))
    rows.append(("sys/7", "Slash id", "Rocky world", "star-2", 1.0, 6371.0, 1.0, 0.01, ""))
    return rows


def write_catalogue(path: Path, n_planets: int = 200, seed: int = 3,
                    header: list[str] | None = None) -> Path:
    """Write the test catalogue as CSV to ``path``."""
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(header or HEADER)
        writer.writerows(catalogue_rows(n_planets, seed))
    return path


class SyncClient:
    """A blocking façade over ``httpx.AsyncClient`` driving the app through ASGITransport."""

    def __init__(self, portal: Any, client: httpx.AsyncClient) -> None:
        self.portal, self.client = portal, client

    def request(self, method: str, url: str, **kwargs: Any) -> httpx.Response:
        """Send one request and wait for the answer."""
        return self.portal.call(functools.partial(self.client.request, method, url, **kwargs))

    def get(self, url: str, **kwargs: Any) -> httpx.Response:
        return self.request("GET", url, **kwargs)

    def post(self, url: str, **kwargs: Any) -> httpx.Response:
        return self.request("POST", url, **kwargs)

    def delete(self, url: str, **kwargs: Any) -> httpx.Response:
        return self.request("DELETE", url, **kwargs)

    def patch(self, url: str, **kwargs: Any) -> httpx.Response:
        return self.request("PATCH", url, **kwargs)


@contextmanager
def asgi_client(app: FastAPI) -> Iterator[SyncClient]:
    """Run the app's lifespan and yield a client that talks to it in process."""
    with anyio.from_thread.start_blocking_portal() as portal, \
            portal.wrap_async_context_manager(app.router.lifespan_context(app)):
        client = httpx.AsyncClient(transport=httpx.ASGITransport(app=app),
                                   base_url="http://127.0.0.1")
        try:
            yield SyncClient(portal, client)
        finally:
            portal.call(client.aclose)


def free_port() -> int:
    """A TCP port on 127.0.0.1 that is free now."""
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@contextmanager
def live_server(app: FastAPI) -> Iterator[str]:
    """Serve the app with uvicorn on 127.0.0.1 in a thread; yield its base URL; stop it."""
    port = free_port()
    server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=port,
                                           log_level="warning"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    try:
        deadline = time.monotonic() + 20
        while not server.started:
            if time.monotonic() > deadline or not thread.is_alive():
                raise RuntimeError("uvicorn did not start")
            time.sleep(0.02)
        yield f"http://127.0.0.1:{port}"
    finally:
        server.should_exit = True
        thread.join(timeout=20)


def wait_done(client: SyncClient | httpx.Client, cat_id: str, timeout: float = 60) -> dict:
    """Poll a catalogue until it is ready or failed; return its JSON."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        body = client.get(f"/api/catalogues/{cat_id}").json()
        if body["status"] in ("ready", "failed"):
            return body
        time.sleep(0.05)
    raise AssertionError(f"catalogue {cat_id} still {body['status']} after {timeout} s")


LIMIT = 1 << 20  # max_upload_bytes in the API tests
ROWS = len(catalogue_rows())


def api_settings(data_dir: Path) -> Settings:
    """Settings for API tests: a small upload limit, 50 columns at most, one ingest worker."""
    return Settings(data_dir=data_dir, max_upload_bytes=LIMIT, max_columns=50, workers=1)


def upload(client: SyncClient | httpx.Client, name: str, content: bytes, auto: bool = False,
            ) -> httpx.Response:
    """Upload ``content`` as multipart field ``file`` named ``name``."""
    params = {"auto": "1"} if auto else {}
    return client.post("/api/catalogues", files={"file": (name, content, "text/csv")},
                       params=params)


def assert_error(response: httpx.Response, status: int, code: str) -> dict[str, Any]:
    """The one error shape: exactly error + detail, detail one short line."""
    assert response.status_code == status, response.text
    body = response.json()
    assert set(body) == {"error", "detail"} and body["error"] == code
    assert body["detail"] and "\n" not in body["detail"] and len(body["detail"]) <= 300
    return body


def data_entries(data_dir: Path) -> set[str]:
    """Everything under incoming/ and catalogues/ (to prove a refused upload left nothing)."""
    return {str(p.relative_to(data_dir)) for d in ("incoming", "catalogues")
            for p in (data_dir / d).rglob("*")}
