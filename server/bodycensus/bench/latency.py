"""Concurrent clients of a served dashboard: each picks a kind of request at random, sends it and
records how long the answer took, until a deadline or a cap on the count. ``bodycensus bench``
and the load test (tests/test_load.py) share them.

Hand-written over threads and httpx because the figure wanted is the latency a person at a
browser sees, per kind of request, under a fixed number of clients; a load-testing framework
would add its own scheduler between the clients and the server.
"""

from __future__ import annotations

import random
import statistics
import threading
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import httpx

Request = tuple[str, dict[str, Any]]  # path and query
RequestKind = Callable[[random.Random], Request]  # a random request of one kind
DEFAULT_CAP = 200_000  # requests, on top of the time bound


@dataclass
class Tally:
    """Latencies per kind of request and the errors, shared by the client threads."""

    cap: int = DEFAULT_CAP
    latency: dict[str, list[float]] = field(default_factory=dict)
    errors: list[str] = field(default_factory=list)
    count: int = 0
    lock: threading.Lock = field(default_factory=threading.Lock)

    def add(self, kind: str, seconds: float, error: str | None) -> bool:
        """Record one request (the latency of an answered one, the error of another); False
        once the cap is reached."""
        with self.lock:
            if error:
                self.errors.append(f"{kind}: {error}")
            else:
                self.latency.setdefault(kind, []).append(seconds)
            self.count += 1
            return self.count < self.cap

    def every(self) -> list[float]:
        """Every answered request's latency, of whichever kind."""
        return [s for values in self.latency.values() for s in values]


def timed_get(client: httpx.Client, path: str, query: Mapping[str, Any]
              ) -> tuple[float, str | None]:
    """Send one GET; its latency in seconds and an error line unless it answered 200."""
    started = time.monotonic()
    try:
        response = client.get(path, params=query)
        error = None if response.status_code == 200 else \
            f"{response.status_code} {path} {response.text[:120]}"
    except httpx.HTTPError as exc:
        error = f"{type(exc).__name__} {path}"
    return time.monotonic() - started, error


def client(http: httpx.Client, kinds: Mapping[str, RequestKind], seed: int, until: float,
           tally: Tally) -> None:
    """One client: random requests, one at a time, until the deadline or the tally's cap."""
    rng, names = random.Random(seed), sorted(kinds)
    while time.monotonic() < until:
        kind = rng.choice(names)
        path, query = kinds[kind](rng)
        seconds, error = timed_get(http, path, query)
        if not tally.add(kind, seconds, error):
            return


def run_clients(base: str, kinds: Mapping[str, RequestKind], clients: int, seconds: float,
                seed: int = 0, tally: Tally | None = None, timeout: float = 600.0) -> Tally:
    """``clients`` threads send requests for ``seconds``; returns their tally. Their HTTP
    clients are made before the clock starts; each thread finishes the request it has started,
    so a slow kind can run past the deadline."""
    tally = tally if tally is not None else Tally()
    https = [httpx.Client(base_url=base, timeout=timeout) for _ in range(clients)]
    try:
        until = time.monotonic() + seconds
        threads = [threading.Thread(target=client, args=(http, kinds, seed + n, until, tally))
                   for n, http in enumerate(https)]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join()
    finally:
        for http in https:
            http.close()
    return tally


def figures(values: list[float]) -> dict[str, float]:
    """Count, median and 95th percentile (nearest rank) in milliseconds."""
    ordered = sorted(values)
    if not ordered:
        return {"requests": 0, "median_ms": float("nan"), "p95_ms": float("nan")}
    p95 = ordered[min(len(ordered) - 1, int(0.95 * len(ordered)))]
    return {"requests": len(ordered), "median_ms": round(statistics.median(ordered) * 1e3, 1),
            "p95_ms": round(p95 * 1e3, 1)}
