"""The app's life on its data directory: restarts, a killed ingest, the demo catalogue, the
refusal to listen beyond loopback, and a run against uvicorn on 127.0.0.1."""

from __future__ import annotations

import socket
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest
from web_support import (
    api_settings,
    asgi_client,
    assert_error,
    catalogue_rows,
    data_entries,
    live_server,
    upload,
    wait_done,
    write_catalogue,
)

from bodycensus.dashboard.app import create_app, serve
from bodycensus.dashboard.settings import Settings
from bodycensus.errors import BadInput
from bodycensus.storage.store import KILLED, Manifest, Store, now

# --- restarts ------------------------------------------------------------------------------


def test_restart_keeps_catalogues_and_views(tmp_path: Path, source: bytes) -> None:
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        cat_id = upload(client, "c.csv", source).json()["id"]
        wait_done(client, cat_id)
        view = client.post("/api/views", json={"catalogue": cat_id, "query": "severity=error",
                                               "title": "kept"}).json()
        before = client.get(f"/api/catalogues/{cat_id}/findings").json()
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        assert client.get(f"/api/catalogues/{cat_id}").json()["status"] == "ready"
        assert client.get(f"/api/views/{view['slug']}").json() == view
        assert client.get(f"/api/catalogues/{cat_id}/findings").json() == before
        assert client.delete(f"/api/catalogues/{cat_id}").status_code == 204
        assert_error(client.get(f"/api/catalogues/{cat_id}"), 404, "not_found")
        assert_error(client.get(f"/api/views/{view['slug']}"), 404, "not_found")
    assert list((tmp_path / "catalogues").iterdir()) == []


def test_an_ingest_cut_off_by_a_kill_is_failed_after_restart(tmp_path: Path,
                                                             source: bytes) -> None:
    store = Store(tmp_path)  # what a server killed mid-ingest leaves behind
    cat_id, path = store.new_upload(".csv")
    path.write_bytes(source)
    store.open_upload(Manifest(id=cat_id, name="c.csv", status="mapping", created=now()))
    store.claim(cat_id, "mapping", status="ingesting")
    (store.workdir(cat_id) / "bodies.parquet").write_bytes(b"half")
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        failed = client.get(f"/api/catalogues/{cat_id}").json()
        assert (failed["status"], failed["error"]) == ("failed", KILLED)
        assert client.delete(f"/api/catalogues/{cat_id}").status_code == 204
        again = upload(client, "c.csv", source).json()
        assert wait_done(client, again["id"])["status"] == "ready"


def test_demo_catalogue_is_added_once(tmp_path: Path) -> None:
    settings = Settings(data_dir=tmp_path, demo=True, workers=1)
    with asgi_client(create_app(settings)) as client:
        [demo] = client.get("/api/catalogues").json()["items"]
        assert demo["demo"] and wait_done(client, demo["id"])["rows"] == 20_000
    with asgi_client(create_app(settings)) as client:
        assert [c["id"] for c in client.get("/api/catalogues").json()["items"]] == [demo["id"]]
    assert list((tmp_path / "tmp").iterdir()) == []


def test_serve_refuses_to_listen_beyond_loopback_without_a_token(tmp_path: Path) -> None:
    with pytest.raises(BadInput, match="token"):
        serve(Settings(data_dir=tmp_path, host="0.0.0.0"))


# --- a real server -------------------------------------------------------------------------


def test_real_server_upload_and_limit(tmp_path: Path) -> None:
    source = write_catalogue(tmp_path / "real.csv", n_planets=300)
    data_dir = tmp_path / "data"
    with live_server(create_app(api_settings(data_dir))) as base, \
            httpx.Client(base_url=base, timeout=30) as client:
        with source.open("rb") as handle:
            response = client.post("/api/catalogues", files={"file": ("real.csv", handle)})
        assert response.status_code == 202
        done = wait_done(client, response.json()["id"])
        assert (done["status"], done["rows"]) == ("ready", len(catalogue_rows(300)))
        page = client.get(f"/api/catalogues/{done['id']}/findings", params={"limit": 2}).json()
        assert page["total"] > 2 and len(page["items"]) == 2
        # publish renames the output into catalogues/ (ready) and then drops incoming/<id>
        deadline = time.monotonic() + 10
        while (data_dir / "incoming" / done["id"]).exists() and time.monotonic() < deadline:
            time.sleep(0.05)
        before = data_entries(data_dir)

        def chunks() -> Iterator[bytes]:  # no content-length: the limit must hold mid-stream
            yield (b"--b\r\nContent-Disposition: form-data; name=\"file\"; "
                   b"filename=\"x.csv\"\r\n\r\n")
            for _ in range(24):
                yield b"id\n" + b"y" * 65536
        big = client.post("/api/catalogues", content=chunks(),
                          headers={"content-type": "multipart/form-data; boundary=b"})
        assert_error(big, 413, "too_large")
        assert data_entries(data_dir) == before
        assert _send_half_and_hang_up(base, data_dir) != before  # it reached the disk ...
        deadline = time.monotonic() + 10
        while data_entries(data_dir) != before and time.monotonic() < deadline:
            time.sleep(0.05)
        assert data_entries(data_dir) == before  # ... and went when the client hung up


def _send_half_and_hang_up(base: str, data_dir: Path) -> set[str]:
    """Start a 1 MB upload, send part of it, and hang up; the data dir just before that."""
    host, port = base.removeprefix("http://").split(":")
    head = (b"--b\r\nContent-Disposition: form-data; name=\"file\"; filename=\"cut.csv\"\r\n\r\n"
            b"id\n" + b"z\n" * 100_000)
    with socket.create_connection((host, int(port))) as sock:
        sock.sendall(b"POST /api/catalogues HTTP/1.1\r\nHost: 127.0.0.1\r\n"
                     b"Content-Length: 1000000\r\n"
                     b"Content-Type: multipart/form-data; boundary=b\r\n\r\n" + head)
        time.sleep(0.3)  # let the server write the first part to disk before the hang-up
        return data_entries(data_dir)
