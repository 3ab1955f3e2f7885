"""A checked run served by a real ``bodycensus serve`` on 127.0.0.1, and the kinds of request
whose latency ``bodycensus bench`` measures on it.

The server is a child process started with ``--add-run DIR`` (the run folder ``bodycensus check
--out DIR`` wrote), so the catalogue is not checked a second time; its own peak memory is read
from /proc before it is stopped.
"""

from __future__ import annotations

import json
import os
import random
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from urllib.parse import quote

import httpx
import polars as pl

from bodycensus.bench.children import Watchdog, resident_mib
from bodycensus.bench.latency import RequestKind
from bodycensus.science.severity import SEVERITIES
from bodycensus.storage.runs import scan_findings

START_SECONDS = 120.0  # a server that does not answer by then has failed
# Bodies, systems and labels one phase's requests pick from: each phase draws its own (a seed
# per phase), so answers the server keeps (dashboard/answers.py) from a phase do not flatter the
# next, and within a phase few requests repeat one.
SAMPLE = 5_000
KINDS = ("overview", "findings", "histogram", "mass-radius", "body", "system", "systems")


@dataclass(frozen=True)
class Server:
    """A running ``bodycensus serve``: its address, the catalogue it shows, its process and
    the watchdog that kills it if its memory passes the bench's limit."""

    base: str
    catalogue: str
    pid: int
    watchdog: Watchdog

    def peak_mib(self) -> float:
        """The server process's peak resident memory so far (VmHWM), also once killed."""
        return max(self.watchdog.peak, resident_mib(self.pid, "VmHWM"))


def free_port() -> int:
    """A TCP port on 127.0.0.1 that is free now."""
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return int(sock.getsockname()[1])


def _wait_ready(base: str, process: subprocess.Popen[bytes]) -> None:
    """Until the server answers, or raise when it died or took too long."""
    deadline = time.monotonic() + START_SECONDS
    while True:
        try:
            httpx.get(f"{base}/api/catalogues", timeout=5)
            return
        except httpx.TransportError:
            if process.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"bodycensus serve did not start on {base} "
                                   f"(exit code {process.poll()})") from None
            time.sleep(0.1)


@contextmanager
def serve_run(run_folder: Path, data_dir: Path, max_mib: float | None = None
              ) -> Iterator[Server]:
    """``bodycensus serve --add-run run_folder`` on a free loopback port, stopped on exit;
    killed as soon as its resident memory passes ``max_mib``."""
    port = free_port()
    env = {k: v for k, v in os.environ.items() if k != "BODYCENSUS_TOKEN"}
    process = subprocess.Popen(
        [sys.executable, "-m", "bodycensus", "serve", "--host", "127.0.0.1", "--port", str(port),
         "--data-dir", str(data_dir), "--add-run", str(run_folder)],
        env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    base = f"http://127.0.0.1:{port}"
    watchdog = Watchdog(process.pid, max_mib)
    try:
        _wait_ready(base, process)
        catalogue = json.loads((run_folder / "manifest.json").read_text(encoding="utf-8"))["id"]
        yield Server(base, catalogue, process.pid, watchdog)
    finally:
        watchdog.stop()
        process.terminate()
        try:
            process.wait(timeout=30)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()


@dataclass(frozen=True)
class Picks:
    """What the requests choose from: flagged bodies, their systems and labels."""

    bodies: list[str]
    systems: list[str]
    labels: list[str]


def picks(run_folder: Path, seed: int = 0) -> Picks:
    """A seeded sample of the run's flagged bodies, their systems and labels (read from the
    run folder, before the clock starts)."""
    found = (scan_findings(run_folder).select("body", "system", "label")
             .filter(pl.col("body").is_not_null()).unique(maintain_order=True).collect())
    rows = found.sample(min(SAMPLE, len(found)), seed=seed) if len(found) else found

    def distinct(column: str) -> list[str]:
        return sorted({v for v in rows[column].to_list() if v})

    return Picks(distinct("body"), distinct("system"), distinct("label"))


def request_kinds(catalogue: str, chosen: Picks) -> dict[str, RequestKind]:
    """Each kind of request the bench measures (``KINDS``, in that order): a function from a
    random generator to (path, query). JSON where the dashboard's pages fetch JSON; the
    diagram pages as HTML, since they draw their figure on the server."""
    api, page = f"/api/catalogues/{quote(catalogue)}", f"/catalogues/{quote(catalogue)}"
    sorts = ("-margin", "severity", "value", "-limit", "body")

    def one(values: list[str], rng: random.Random) -> str:
        return quote(rng.choice(values), safe="")

    return {
        "overview": lambda r: (f"{api}/overview", {}),
        "findings": lambda r: (f"{api}/findings", {
            "severity": r.choice(SEVERITIES), "label": r.choice(chosen.labels),
            "sort": r.choice(sorts), "offset": r.choice((0, 0, 50, 500)), "limit": 50}),
        "histogram": lambda r: (f"{page}/diagrams", {"diagram": "distributions"}),
        "mass-radius": lambda r: (f"{page}/diagrams", {"diagram": "mass-radius"}),
        "body": lambda r: (f"{api}/bodies/{one(chosen.bodies, r)}", {}),
        "system": lambda r: (f"{api}/systems/{one(chosen.systems, r)}", {}),
        "systems": lambda r: (f"{api}/systems", {
            "offset": r.choice((0, 0, 50, 1000)), "limit": 50}),
    }
