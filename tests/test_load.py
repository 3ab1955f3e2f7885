"""Load: 16 concurrent clients of mixed reads against a large catalogue while another uploads.

``bodycensus serve`` runs in a subprocess on 127.0.0.1 (so the clients do not share its GIL).
A demo catalogue of ``BODYCENSUS_LOAD_BODIES`` bodies is uploaded through the API first; then
16 clients (``bodycensus.bench.latency``, shared with ``bodycensus bench``) read for
``BODYCENSUS_LOAD_SECONDS`` seconds (overview JSON, findings pages with filters, body
detail, aggregates, CSV export of a filtered set, HTML screens) while a second catalogue is
uploaded and checked. Bounded in time and in count; zero errors allowed. Figures
go to stdout and to ``test-artifacts/load.json``.

The default is the issue's 1,000,000 bodies: measured on the 2-core machine (shared with other
test runs) the whole module took 126 s (11.6 s to generate, 49 s to upload and check, 61 s of
load). Set BODYCENSUS_LOAD_BODIES lower (e.g. 200000) where the suite's budget is tighter.
"""

from __future__ import annotations

import json
import os
import random
import subprocess
import sys
import threading
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import httpx
import pytest
from web_support import free_port, wait_done

from bodycensus.bench.latency import figures, run_clients
from bodycensus.demo import write_demo

BODIES = int(os.environ.get("BODYCENSUS_LOAD_BODIES", "1000000"))
SECONDS = float(os.environ.get("BODYCENSUS_LOAD_SECONDS", "60"))
CLIENTS = 16
SECOND_UPLOAD_BODIES = 50_000
ARTIFACT = Path(__file__).resolve().parents[1] / "test-artifacts" / "load.json"

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """``bodycensus serve`` on a free loopback port in a subprocess; its base URL."""
    port, data_dir = free_port(), tmp_path_factory.mktemp("load-data")
    env = {k: v for k, v in os.environ.items() if k != "BODYCENSUS_TOKEN"}
    process = subprocess.Popen(
        [sys.executable, "-m", "bodycensus", "serve", "--host", "127.0.0.1", "--port", str(port),
         "--data-dir", str(data_dir)], env=env, stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL)
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 30
        while True:
            try:
                httpx.get(f"{base}/api/catalogues", timeout=5)
                break
            except httpx.TransportError:
                assert process.poll() is None and time.monotonic() < deadline, "no server"
                time.sleep(0.1)
        yield base
    finally:
        process.terminate()
        process.wait(timeout=30)


def _upload(base: str, path: Path, timeout: float) -> dict[str, Any]:
    """Upload ``path`` (streamed) with auto mapping and wait until it is checked."""
    with httpx.Client(base_url=base, timeout=timeout) as client, path.open("rb") as handle:
        response = client.post("/api/catalogues", params={"auto": "1"},
                               files={"file": (path.name, handle, "text/csv")})
        assert response.status_code == 202, response.text
        return wait_done(client, response.json()["id"], timeout=timeout)


@pytest.fixture(scope="module")
def loaded(server: str, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """The big catalogue, uploaded and ready; what the readers pick from; the second file."""
    folder = tmp_path_factory.mktemp("load-src")
    started = time.monotonic()
    big, _ = write_demo(folder / "big.csv", n_bodies=BODIES, seed=11)
    generated = time.monotonic()
    done = _upload(server, big, timeout=900)
    assert done["status"] == "ready", done["error"]
    second, _ = write_demo(folder / "second.csv", n_bodies=SECOND_UPLOAD_BODIES, seed=12)
    with httpx.Client(base_url=server, timeout=60) as client:
        cat = done["id"]
        aggs = client.get(f"/api/catalogues/{cat}/aggregates").json()
        page = client.get(f"/api/catalogues/{cat}/findings", params={"limit": 500}).json()
    return {"id": cat, "second": second, "bodies": sorted({i["body"] for i in page["items"]}),
            "labels": [lb["label"] for lb in aggs["labels"] if lb["label"]][:20],
            "rules": sorted({i["rule"] for i in page["items"]}),
            "generate_s": generated - started, "ingest_s": time.monotonic() - generated}


def _requests(data: dict[str, Any]) -> dict[str, Callable[[random.Random], tuple[str, dict]]]:
    """Each kind of read: a function from a random generator to (path, query)."""
    cat = f"/api/catalogues/{data['id']}"
    page = f"/catalogues/{data['id']}"
    sev = ("error", "impossible", "unstable", "suspect", "note")
    return {
        "overview.json": lambda r: (f"{cat}/overview", {}),
        "findings.json": lambda r: (f"{cat}/findings", {
            "severity": r.choice(sev), "label": r.choice(data["labels"]), "sort": "-margin",
            "offset": r.choice((0, 0, 50, 500)), "limit": 50}),
        "body.json": lambda r: (f"{cat}/bodies/{r.choice(data['bodies'])}", {}),
        "aggregates.json": lambda r: (f"{cat}/aggregates", {}),
        "findings.csv": lambda r: (f"{cat}/findings.csv", {
            "rule": r.choice(data["rules"]), "label": r.choice(data["labels"])}),
        "overview.html": lambda r: (page, {}),
        "findings.html": lambda r: (f"{page}/findings", {"severity": r.choice(sev)}),
        "diagrams.html": lambda r: (f"{page}/diagrams", {"diagram": r.choice(
            ("density", "mass-radius", "roche", "orbits", "distributions"))}),
        "body.html": lambda r: (f"{page}/bodies/{r.choice(data['bodies'])}", {}),
    }


def test_sixteen_clients_read_while_a_catalogue_uploads(server: str,
                                                       loaded: dict[str, Any]) -> None:
    kinds = _requests(loaded)
    upload_result: dict[str, Any] = {}
    uploader = threading.Thread(target=lambda: upload_result.update(
        _upload(server, loaded["second"], timeout=SECONDS + 600)))
    started = time.monotonic()
    uploader.start()
    tally = run_clients(server, kinds, CLIENTS, SECONDS, timeout=60)
    elapsed = time.monotonic() - started
    uploader.join(timeout=600)
    every = tally.every()
    report = {"bodies": BODIES, "seconds": round(elapsed, 1), "clients": CLIENTS,
              **figures(every), "requests_per_s": round(len(every) / elapsed, 1),
              "errors": len(tally.errors), "generate_s": round(loaded["generate_s"], 1),
              "upload_and_check_s": round(loaded["ingest_s"], 1),
              "second_upload": {"bodies": SECOND_UPLOAD_BODIES,
                                "status": upload_result.get("status")},
              "endpoints": {k: figures(v) for k, v in sorted(tally.latency.items())}}
    ARTIFACT.parent.mkdir(parents=True, exist_ok=True)
    ARTIFACT.write_text(json.dumps(report, indent=1), encoding="utf-8")
    print("\nload:", json.dumps(report, indent=1))
    assert tally.errors == [], tally.errors[:5]
    assert upload_result.get("status") == "ready", upload_result.get("error")
    assert len(every) > CLIENTS and set(tally.latency) == set(kinds)
