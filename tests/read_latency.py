"""Hand-run: the dashboard's read latency on a checked run folder, per kind of request, with one
client and with 16, and each response's size.

    python tests/read_latency.py RUN_FOLDER [--seconds 30] [--single 15] [--clients 16]

``bodycensus serve --add-run RUN_FOLDER`` runs in a subprocess on a free loopback port with a
fresh data directory (the folder is hard-linked in, never changed); each kind of request is
sent ``--single`` times by one client (median and 95th percentile), then 16 clients send the
mixed kinds for ``--seconds`` (median and p95 per kind and over all). Prints one JSON document.
Timing is for benchmarks, never asserted in a test (issue 10's dashboard targets).
"""

from __future__ import annotations

import argparse
import json
import os
import random
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import httpx
from web_support import free_port

SEVERITIES = ("error", "impossible", "unstable", "suspect", "note")
Kind = Callable[[random.Random], tuple[str, dict[str, Any]]]


def _kinds(cat: str, data: dict[str, Any]) -> dict[str, Kind]:
    """Each kind of read the issue names: a function from a random generator to (path, query)."""
    api, page = f"/api/catalogues/{cat}", f"/catalogues/{cat}"
    return {
        "overview": lambda r: (page, {}),
        "findings default": lambda r: (f"{api}/findings", {"offset": r.choice((0, 50, 5000))}),
        "findings filtered+sorted": lambda r: (f"{api}/findings", {
            "severity": r.choice(SEVERITIES), "label": r.choice(data["labels"]),
            "sort": r.choice(("-margin", "body", "value")),
            "offset": r.choice((0, 0, 50, 500)), "limit": 50}),
        "histogram": lambda r: (f"{page}/diagrams", {"diagram": "distributions"}),
        "mass-radius": lambda r: (f"{page}/diagrams", {"diagram": "mass-radius"}),
        "body": lambda r: (f"{api}/bodies/{r.choice(data['bodies'])}", {}),
        "body page": lambda r: (f"{page}/bodies/{r.choice(data['bodies'])}", {}),
        "systems": lambda r: (f"{api}/systems", {"offset": r.choice((0, 50, 5000))}),
        "systems page": lambda r: (f"{page}/systems", {}),
        "system": lambda r: (f"{api}/systems/{r.choice(data['systems'])}", {}),
        "system page": lambda r: (f"{page}/systems/{r.choice(data['systems'])}", {}),
    }


def _figures(values: list[float]) -> dict[str, float]:
    ordered = sorted(values)
    p95 = ordered[min(len(ordered) - 1, int(0.95 * len(ordered)))]
    return {"n": len(ordered), "median_ms": round(statistics.median(ordered) * 1e3, 1),
            "p95_ms": round(p95 * 1e3, 1)}


def _serve(run: Path, data_dir: Path) -> tuple[subprocess.Popen[bytes], str, str]:
    port = free_port()
    env = {k: v for k, v in os.environ.items() if k != "BODYCENSUS_TOKEN"}
    process = subprocess.Popen(
        [sys.executable, "-m", "bodycensus", "serve", "--host", "127.0.0.1", "--port",
         str(port), "--data-dir", str(data_dir), "--add-run", str(run)], env=env,
        stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    base, deadline = f"http://127.0.0.1:{port}", time.monotonic() + 120
    while True:
        try:
            cats = httpx.get(f"{base}/api/catalogues", timeout=5).json()
            return process, base, cats["items"][0]["id"] if "items" in cats else cats[0]["id"]
        except httpx.TransportError:
            assert process.poll() is None and time.monotonic() < deadline, "no server"
            time.sleep(0.2)


def _picks(client: httpx.Client, cat: str) -> dict[str, Any]:
    """Bodies, labels and systems to ask for, from the catalogue itself."""
    aggs = client.get(f"/api/catalogues/{cat}/aggregates").json()
    page = client.get(f"/api/catalogues/{cat}/findings", params={"limit": 500}).json()
    systems = client.get(f"/api/catalogues/{cat}/systems", params={"limit": 200}).json()
    return {"labels": [lb["label"] for lb in aggs["labels"] if lb["label"]][:20],
            "bodies": sorted({i["body"] for i in page["items"]}),
            "systems": [s["system"] for s in systems["items"]]}


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("run", type=Path)
    parser.add_argument("--seconds", type=float, default=30.0)
    parser.add_argument("--single", type=int, default=15)
    parser.add_argument("--clients", type=int, default=16)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(dir=args.run.parent) as data_dir:
        process, base, cat = _serve(args.run.resolve(), Path(data_dir))
        try:
            print(json.dumps(_measure(base, cat, args), indent=1))
        finally:
            process.terminate()
            process.wait(timeout=60)


def _measure(base: str, cat: str, args: argparse.Namespace) -> dict[str, Any]:
    with httpx.Client(base_url=base, timeout=300) as client:
        started = time.monotonic()
        client.get(f"/catalogues/{cat}")  # a first overview writes what it keeps (groups.json)
        first = time.monotonic() - started
        kinds = _kinds(cat, _picks(client, cat))
        single: dict[str, Any] = {}
        for name, kind in kinds.items():
            rng, times, size = random.Random(5), [], 0
            for _ in range(args.single):
                path, query = kind(rng)
                t0 = time.monotonic()
                response = client.get(path, params=query)
                times.append(time.monotonic() - t0)
                assert response.status_code == 200, (path, response.text[:200])
                size = max(size, len(response.content))
            single[name] = {**_figures(times), "max_bytes": size}
    return {"first_overview_s": round(first, 2), "one_client": single,
            "clients": args.clients, **_crowd(base, kinds, args)}


def _crowd(base: str, kinds: dict[str, Kind], args: argparse.Namespace) -> dict[str, Any]:
    lock, latency, errors = threading.Lock(), {}, []
    until = time.monotonic() + args.seconds

    def client(seed: int) -> None:
        rng, names = random.Random(seed), sorted(kinds)
        with httpx.Client(base_url=base, timeout=300) as http:
            while time.monotonic() < until:
                name = rng.choice(names)
                path, query = kinds[name](rng)
                t0 = time.monotonic()
                response = http.get(path, params=query)
                with lock:
                    latency.setdefault(name, []).append(time.monotonic() - t0)
                    if response.status_code != 200:
                        errors.append(f"{response.status_code} {path}")

    threads = [threading.Thread(target=client, args=(i,)) for i in range(args.clients)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    every = [s for values in latency.values() for s in values]
    return {"mixed": _figures(every), "errors": errors[:5],
            "per_kind": {k: _figures(v) for k, v in sorted(latency.items())}}


if __name__ == "__main__":
    main()
