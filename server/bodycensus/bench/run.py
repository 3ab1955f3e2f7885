"""One run of ``bodycensus bench``: for each catalogue size, the plain polars floors,
``bodycensus check`` and the pandas reference, each a child process measured on its own (wall
time, peak RSS); check's findings compared with the reference's; then the served dashboard's
latency on the largest catalogue with each number of clients; one table and its ratios.

Every figure comes from this run, on the same files, so the ratios hold whatever else the machine
is doing; the absolute seconds do not.
"""

from __future__ import annotations

import json
import os
import random
import shutil
import sys
import tempfile
import time
from dataclasses import asdict, dataclass
from importlib.metadata import version
from pathlib import Path
from typing import Any

import httpx
import polars as pl

from bodycensus.bench import jobs
from bodycensus.bench.children import Measured, measure
from bodycensus.bench.latency import RequestKind, run_clients, timed_get
from bodycensus.bench.latency import figures as latency_figures
from bodycensus.bench.same_findings import compare_findings
from bodycensus.bench.served import KINDS, Server, picks, request_kinds, serve_run
from bodycensus.bench.table import render

MIXED = "mixed"


@dataclass(frozen=True)
class BenchOptions:
    """What to measure: sizes, catalogues on disk, clients, seconds per latency phase."""

    bodies: tuple[int, ...] = (1_000_000, 10_000_000)
    catalogues: tuple[Path, ...] = ()
    clients: tuple[int, ...] = (1, 16)
    seconds: float = 10.0
    seed: int = 5
    workdir: Path | None = None
    out: Path | None = None
    pandas_max_bodies: int | None = None
    latency: bool = True
    max_mib: float | None = 16_384.0  # any measured process above this is killed


def say(text: str) -> None:
    """A progress line on stderr (the table goes to stdout)."""
    print(f"bench: {text}", file=sys.stderr, flush=True)


def _rows(csv: Path) -> int:
    """The data rows of a CSV catalogue."""
    return int(pl.scan_csv(csv, infer_schema=False).select(pl.len()).collect().item())


def catalogues(options: BenchOptions, folder: Path) -> list[tuple[int, Path, bool]]:
    """(bodies, file, generated) for every size, smallest first: the files given, at their own
    row counts, and a demo generated for each size none of them has."""
    from bodycensus.demo import write_demo

    given = {}
    for path in options.catalogues:
        say(f"counting the rows of {path}")
        given[_rows(path)] = path
    chosen = [(n, p, False) for n, p in given.items()]
    for n in options.bodies:
        if n not in given:
            say(f"generating a demo catalogue of {n:,} bodies (seed {options.seed})")
            csv, _ = write_demo(folder / f"demo-{n}.csv", n_bodies=n, seed=options.seed)
            chosen.append((n, csv, True))
    return sorted(chosen)


def _as_row(measured: Measured) -> dict[str, Any]:
    return asdict(measured)


def _check(csv: Path, folder: Path, options: BenchOptions, *extra: str | Path
           ) -> tuple[dict[str, Any], Path]:
    """``bodycensus check CSV --format json --quiet [extra]`` measured, its JSON kept."""
    document = folder / f"check-{csv.stem}.json"
    with document.open("wb") as out:
        measured = measure("bodycensus", "check", csv, "--format", "json", "--quiet", *extra,
                           stdout=out, max_mib=options.max_mib)
    return _as_row(measured), document


def measure_size(bodies: int, csv: Path, folder: Path, options: BenchOptions, served: bool
                 ) -> tuple[dict[str, Any], Path | None]:
    """Every process on one catalogue; the results and, when ``served``, the run folder a
    second check wrote with ``--out`` for the dashboard."""
    rows: dict[str, Any] = {}
    scratch = folder / f"floor-{bodies}.parquet"
    for job in ("floor-stream", "floor-eager"):
        say(f"{bodies:,} bodies: {job}")
        rows[job.replace("-", "_")] = _as_row(measure(
            "bodycensus.bench.jobs", job, csv, scratch, max_mib=options.max_mib))
        scratch.unlink(missing_ok=True)
    say(f"{bodies:,} bodies: bodycensus check --format json --quiet")
    rows["check"], document = _check(csv, folder, options)
    rows["pandas"], same = _pandas(bodies, csv, document, folder, options, rows["check"])
    document.unlink()
    run = None
    if served:
        run = folder / f"run-{bodies}"
        say(f"{bodies:,} bodies: bodycensus check --format json --quiet --out {run}")
        rows["check_out"], document = _check(csv, folder, options, "--out", run)
        document.unlink()
    return {"bodies": bodies, "csv": str(csv), "csv_mib": csv.stat().st_size / 2**20,
            "rows": rows, "same_findings": same}, run


def check_findings(document: Path) -> pl.DataFrame:
    """The findings of check's JSON document (body, rule, severity, value, limit)."""
    found = json.loads(document.read_text(encoding="utf-8"))["findings"]
    schema = {"body": pl.String, "rule": pl.String, "severity": pl.String,
              "value": pl.Float64, "limit": pl.Float64}
    return pl.DataFrame([{k: f[k] for k in schema} for f in found], schema=schema)


def _pandas(bodies: int, csv: Path, document: Path, folder: Path, options: BenchOptions,
            check: dict[str, Any]) -> tuple[dict[str, Any], str]:
    """The pandas reference's process and whether its findings equal check's."""
    why = jobs.pandas_available()
    if why is None and options.pandas_max_bodies is not None and \
            bodies > options.pandas_max_bodies:
        why = f"--pandas-max-bodies {options.pandas_max_bodies:,}"
    if why is not None:
        say(f"{bodies:,} bodies: pandas reference not run: {why}")
        return {"not_run": why}, "not run"
    say(f"{bodies:,} bodies: pandas reference")
    found = folder / f"pandas-{bodies}.parquet"
    measured = measure("bodycensus.bench.jobs", "pandas", csv, found, max_mib=options.max_mib)
    if not measured.ok or check["exit_code"] != 0:
        found.unlink(missing_ok=True)
        return _as_row(measured), "not compared"
    agreement = compare_findings(check_findings(document), pl.read_parquet(found))
    found.unlink()
    say(f"{bodies:,} bodies: findings of check and pandas {agreement.line()}")
    return _as_row(measured), agreement.line()


def _phase(server: Server, kinds: dict[str, RequestKind], name: str, clients: int,
           seconds: float) -> dict[str, Any]:
    """One kind of request (or all of them mixed) with ``clients`` clients for ``seconds``."""
    chosen = kinds if name == MIXED else {name: kinds[name]}
    tally = run_clients(server.base, chosen, clients, seconds, seed=clients)
    if tally.errors:
        say(f"  {len(tally.errors)} errors, the first: {tally.errors[0]}")
    phase = {"kind": name, "clients": clients, "errors": len(tally.errors),
             **latency_figures(tally.every())}
    if name == MIXED:  # which kinds made the mix slow (kept in the JSON, not in the table)
        phase["by_kind"] = {k: latency_figures(v) for k, v in sorted(tally.latency.items())}
    return phase


def _first_requests(server: Server, kinds: dict[str, RequestKind]) -> dict[str, float]:
    """The latency (ms) of a cold first request of each kind, one after the other."""
    first = {}
    with httpx.Client(base_url=server.base, timeout=600) as http:
        for name, kind in kinds.items():
            seconds, error = timed_get(http, *kind(random.Random(0)))
            first[name] = round(seconds * 1e3, 1)
            if error:
                say(f"  first {name}: {error}")
    return first


def measure_latency(run: Path, bodies: int, folder: Path, options: BenchOptions
                    ) -> dict[str, Any]:
    """Serve the run folder and time each kind of request, then all mixed, per client count;
    each phase picks its own bodies and systems (``served.SAMPLE``). A server the watchdog
    kills (memory past ``--max-mib``) marks its phase and is started again for the phases
    left."""
    data_dir = folder / "serve-data"
    plan = [(clients, name) for clients in options.clients for name in [*KINDS, MIXED]]
    phases: list[dict[str, Any]] = []
    first: dict[str, float] = {}
    peak = 0.0
    while plan:
        with serve_run(run, data_dir, options.max_mib) as server:
            first = first or _first_requests(server, request_kinds(server.catalogue,
                                                                   picks(run)))
            while plan:
                clients, name = plan.pop(0)
                kinds = request_kinds(server.catalogue, picks(run, seed=1 + len(phases)))
                say(f"latency on {bodies:,} bodies: {name}, {clients} client(s), "
                    f"{options.seconds:g} s")
                phases.append(_phase(server, kinds, name, clients, options.seconds))
                if server.watchdog.killed:
                    phases[-1]["killed"] = server.watchdog.killed
                    say(f"  the server was {server.watchdog.killed}; starting it again")
                    break
            peak = max(peak, server.peak_mib())
    shutil.rmtree(data_dir, ignore_errors=True)
    return {"bodies": bodies, "seconds": options.seconds, "kinds": [*KINDS, MIXED],
            "first_ms": first, "phases": phases, "server_peak_mib": peak}


def _head() -> dict[str, Any]:
    names = ("bodycensus", "polars", "pandas")
    versions = []
    for name in names:
        try:
            versions.append(f"{name} {version(name)}")
        except Exception:  # noqa: BLE001 -- a missing package is named as such
            versions.append(f"{name} missing")
    return {"when": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime()),
            "cores": os.cpu_count(), "load": os.getloadavg()[0], "versions": ", ".join(versions)}


def run_bench(options: BenchOptions) -> int:
    """Measure everything, print the table on stdout, save the results when asked; exit code
    1 when the pandas reference's findings differ from check's (the table says where)."""
    head = _head()
    with tempfile.TemporaryDirectory(prefix="bodycensus-bench-", dir=options.workdir) as tmp:
        folder = Path(tmp)
        sizes = []
        chosen = catalogues(options, folder)
        run = None
        for bodies, csv, generated in chosen:
            served = options.latency and bodies == chosen[-1][0]
            size, run = measure_size(bodies, csv, folder, options, served)
            sizes.append(size)
            if generated:  # a scratch demo: its disk space back before the next size
                csv.unlink()
        if not options.latency:
            latency: dict[str, Any] = {"not_run": "--no-latency"}
        elif run is None or sizes[-1]["rows"]["check_out"]["exit_code"] != 0:
            latency = {"not_run": "check --out failed, so there is no run folder to serve"}
        else:
            latency = measure_latency(run, chosen[-1][0], folder, options)
    results = {"head": head, "sizes": sizes, "latency": latency}
    if options.out is not None:
        options.out.write_text(json.dumps(results, indent=1), encoding="utf-8")
    sys.stdout.write(render(results))
    sys.stdout.flush()
    differ = [s["bodies"] for s in sizes if s["same_findings"].startswith("DIFFERENT")]
    if differ:
        say(f"the pandas reference's findings differ from check's at {differ} bodies")
    return 1 if differ else 0
