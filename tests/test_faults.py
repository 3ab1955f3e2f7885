"""Faults: a server killed mid-ingest, a full or read-only disk, and uploads and reads at once.

The kill runs a real ``python -m bodycensus serve`` on 127.0.0.1; the full disk is a small tmpfs
(skipped, with the reason, where mounting is not permitted).
"""

from __future__ import annotations

import contextlib
import gzip
import hashlib
import os
import signal
import sqlite3
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import numpy as np
import polars as pl
import pytest
from hostile_corpus import CLEAN, csv_bytes
from web_support import (
    asgi_client,
    data_entries,
    free_port,
    live_server,
    upload,
    wait_done,
    write_catalogue,
)

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.settings import Settings
from bodycensus.storage.store import KILLED


def big_csv(path: Path, rows: int) -> Path:
    """A plain catalogue of ``rows`` Earth-like planets (seeded random sizes and orbits, so
    its Parquet does not compress to nothing) around one Sun-like star."""
    n = pl.int_range(1, rows + 1, eager=True)
    rng = np.random.default_rng(5)
    frame = pl.DataFrame({"id": "p" + n.cast(pl.String), "type": "Rocky world", "parent": "S1",
                          "mass [kg]": 5.97e24 * rng.uniform(0.5, 2, rows),
                          "radius [m]": 6.371e6 * rng.uniform(0.9, 1.2, rows),
                          "a [au]": rng.uniform(0.5, 5, rows), "eccentricity": 0.01})
    star = pl.DataFrame({"id": ["S1"], "type": ["G2V"], "parent": [None], "mass [kg]": [1.989e30],
                         "radius [m]": [6.957e8], "a [au]": [None], "eccentricity": [None]},
                        schema=frame.schema)
    pl.concat([star, frame]).write_csv(path)
    return path


def hashes(folder: Path) -> dict[str, str]:
    """sha256 of every file under ``folder``."""
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


@contextlib.contextmanager
def served_process(data_dir: Path) -> Iterator[tuple[subprocess.Popen, httpx.Client]]:
    """``bodycensus serve`` in its own process on 127.0.0.1; killed at the end if still alive."""
    port = free_port()
    proc = subprocess.Popen([sys.executable, "-m", "bodycensus", "serve", "--data-dir",
                             str(data_dir), "--port", str(port)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    client = httpx.Client(base_url=f"http://127.0.0.1:{port}", timeout=30)
    try:
        deadline = time.monotonic() + 30
        while True:
            with contextlib.suppress(httpx.TransportError):
                if client.get("/api/catalogues").status_code == 200:
                    break
            assert proc.poll() is None and time.monotonic() < deadline, "server did not start"
            time.sleep(0.1)
        yield proc, client
    finally:
        client.close()
        if proc.poll() is None:
            proc.kill()
        proc.wait(timeout=10)


def test_sigkill_during_ingest_loses_nothing_earlier(tmp_path: Path) -> None:
    data_dir = tmp_path / "data"
    source = big_csv(tmp_path / "big.csv", 300_000)
    small = write_catalogue(tmp_path / "small.csv", n_planets=50).read_bytes()
    with served_process(data_dir) as (proc, client):
        earlier = upload(client, "small.csv", small).json()["id"]
        assert wait_done(client, earlier)["status"] == "ready"
        view = client.post("/api/views", json={"catalogue": earlier, "query": "severity=error",
                                               "title": "kept"}).json()
        findings = client.get(f"/api/catalogues/{earlier}/findings").json()
        kept = hashes(data_dir / "catalogues")
        with source.open("rb") as handle:
            answer = client.post("/api/catalogues", files={"file": ("big.csv", handle)})
            cat_id = answer.json()["id"]
        stage = _wait_for_stage(client, cat_id)
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=10)
    assert stage not in ("queued", "done")  # killed in the middle of the run
    with served_process(data_dir) as (_, client):
        killed = client.get(f"/api/catalogues/{cat_id}").json()
        assert (killed["status"], killed["error"]) == ("failed", KILLED)
        assert [p.name for p in (data_dir / "incoming" / cat_id).iterdir()] == ["manifest.json"]
        assert hashes(data_dir / "catalogues") == kept
        assert client.get(f"/api/views/{view['slug']}").json() == view
        assert client.get(f"/api/catalogues/{earlier}/findings").json() == findings
        with source.open("rb") as handle:
            again = client.post("/api/catalogues", files={"file": ("big.csv", handle)}).json()
        done = wait_done(client, again["id"], timeout=120)
        assert (done["status"], done["rows"]) == ("ready", 300_001)


def _wait_for_stage(client: httpx.Client, cat_id: str) -> str:
    """Poll until the ingest is past its queue; the stage it is in."""
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        body = client.get(f"/api/catalogues/{cat_id}").json()
        if body["status"] == "ingesting" and body["progress"]["stage"] != "queued":
            return body["progress"]["stage"]
        assert body["status"] == "ingesting", body
        time.sleep(0.02)
    raise AssertionError("the ingest never started")


def test_writes_go_to_a_temporary_name_then_fsync_then_rename(tmp_path: Path,
                                                              monkeypatch: pytest.MonkeyPatch
                                                              ) -> None:
    events: list[tuple[str, str]] = []
    real_fsync, real_replace = os.fsync, os.replace

    def fsync(fd: int) -> None:
        events.append(("fsync", os.readlink(f"/proc/self/fd/{fd}")))
        real_fsync(fd)

    def replace(src: str | Path, dst: str | Path) -> None:
        events.append(("replace", f"{os.path.abspath(src)} {os.path.abspath(dst)}"))
        real_replace(src, dst)

    monkeypatch.setattr(os, "fsync", fsync)
    monkeypatch.setattr(os, "replace", replace)
    with asgi_client(create_app(Settings(data_dir=tmp_path, workers=1))) as client:
        cat_id = upload(client, "c.csv", csv_bytes(CLEAN)).json()["id"]
        assert wait_done(client, cat_id)["status"] == "ready"
    synced = set()
    renamed_into_work = set()
    for kind, what in events:
        if kind == "fsync":
            synced.add(what)
            continue
        src, dst = what.split(" ")
        if Path(dst).parent.name == "work":
            assert src in synced, f"{src} renamed to {dst} before it was fsynced"
            renamed_into_work.add(Path(dst).name)
    final = {p.name for p in (tmp_path / "catalogues" / cat_id).iterdir()}
    assert final <= renamed_into_work  # every file of the catalogue arrived by a rename
    assert str(tmp_path / "catalogues") in synced  # the folder's rename made durable
    with sqlite3.connect(tmp_path / "bodycensus.sqlite") as conn:
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"


@pytest.fixture
def small_disk(tmp_path: Path) -> Iterator[Path]:
    """A 12 MiB tmpfs; skipped where mounting is not permitted."""
    mount = tmp_path / "disk"
    mount.mkdir()
    made = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=12m", "tmpfs", str(mount)],
                          capture_output=True, text=True, check=False)
    if made.returncode != 0:
        pytest.skip(f"cannot mount a small tmpfs to fill ({made.stderr.strip()[:80]})")
    try:
        yield mount
    finally:
        subprocess.run(["umount", "-l", str(mount)], check=False)


def test_full_disk_and_read_only_data_dir(small_disk: Path, tmp_path: Path) -> None:
    data_dir = small_disk / "data"
    settings = Settings(data_dir=data_dir, workers=1)
    big = big_csv(tmp_path / "fill.csv", 300_000).read_bytes()  # ~25 MB of text
    with asgi_client(create_app(settings)) as client:
        earlier = upload(client, "small.csv", csv_bytes(CLEAN)).json()["id"]
        assert wait_done(client, earlier)["status"] == "ready"
        kept, before = hashes(data_dir / "catalogues"), data_entries(data_dir)
        for name, content in (("fill.csv.gz", gzip.compress(big, 1)),
                              ("fill.csv", big[: 9 * 2**20].rsplit(b"\n", 1)[0] + b"\n")):
            accepted = upload(client, name, content)
            assert accepted.status_code == 202, accepted.text
            done = wait_done(client, accepted.json()["id"], timeout=60)
            assert done["status"] == "failed" and "disk of the data directory is full" in \
                done["error"], done
            assert [p.name for p in (data_dir / "incoming" / done["id"]).iterdir()] == [
                "manifest.json"]
            assert client.delete(f"/api/catalogues/{done['id']}").status_code == 204
            assert hashes(data_dir / "catalogues") == kept and data_entries(data_dir) == before
        subprocess.run(["mount", "-o", "remount,ro", str(small_disk)], check=True)
        refused = upload(client, "late.csv", csv_bytes(CLEAN))
        assert refused.status_code == 507 and "cannot be written" in refused.json()["detail"]
        assert client.get(f"/api/catalogues/{earlier}/findings").status_code == 200
        assert data_entries(data_dir) == before and hashes(data_dir / "catalogues") == kept


def test_two_uploads_at_once_and_reads_during_ingest(tmp_path: Path) -> None:
    sources = [big_csv(tmp_path / f"c{i}.csv", 60_000).read_bytes() for i in range(2)]
    with live_server(create_app(Settings(data_dir=tmp_path / "data", workers=2))) as base, \
            httpx.Client(base_url=base, timeout=60) as client:
        earlier = upload(client, "small.csv", csv_bytes(CLEAN)).json()["id"]
        wait_done(client, earlier)
        answers: list[httpx.Response] = []

        def send(content: bytes, name: str) -> None:
            with httpx.Client(base_url=base, timeout=60) as own:
                answers.append(upload(own, name, content))

        threads = [threading.Thread(target=send, args=(s, f"c{i}.csv"))
                   for i, s in enumerate(sources)]
        for thread in threads:
            thread.start()
        reads = _read_while(client, earlier, threads)
        assert [a.status_code for a in answers] == [202, 202]
        ids = [a.json()["id"] for a in answers]
        reads += _read_while(client, earlier, [], until=ids)
        assert {wait_done(client, i)["status"] for i in ids} == {"ready"}
        assert reads and all(code == 200 for code in reads), reads


def _read_while(client: httpx.Client, earlier: str, threads: list[threading.Thread],
                until: list[str] | None = None) -> list[int]:
    """GET a mix of reads until the threads end or the catalogues ``until`` are done."""
    codes: list[int] = []
    urls = ["/api/catalogues", f"/api/catalogues/{earlier}/findings?limit=5",
            f"/api/catalogues/{earlier}/overview", f"/catalogues/{earlier}"]
    while any(t.is_alive() for t in threads) or (until and any(
            client.get(f"/api/catalogues/{i}").json()["status"] == "ingesting" for i in until)):
        codes += [client.get(url).status_code for url in urls]
    return codes
