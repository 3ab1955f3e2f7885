"""``bodycensus bench``: speed and memory of each stage, as ratios against baselines run here.

Each stage runs in a fresh process so its peak memory is its own. Baselines are the plainest
polars way to do the same work: read the CSV and write Parquet (for ingest), and one lazy pass
that derives density and filters on it (for the rule pass).
"""

from __future__ import annotations

import multiprocessing
import resource
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import polars as pl


def _peak_mib() -> float:
    """This process's peak resident memory. VmHWM belongs to the address space, so unlike
    ru_maxrss it does not carry over the parent's peak through fork and exec."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def _timed(job: Callable[[], object]) -> tuple[float, float]:
    started = time.perf_counter()
    job()
    return time.perf_counter() - started, _peak_mib()


Timing = tuple[float, float]  # seconds, peak MiB


def _stage(name: str, workdir: str, queue: multiprocessing.Queue[Timing]) -> None:
    """Run one named stage in this (child) process and report (seconds, peak MiB)."""
    from bodycensus.engines.local import CheckOptions, check_table
    from bodycensus.input.ingest import ingest
    from bodycensus.science import artefacts
    from bodycensus.science.rules import all_rules
    from bodycensus.science.rules.base import evaluate
    from bodycensus.storage.runs import scan_bodies

    folder = Path(workdir)
    csv, normalised = folder / "demo.csv", folder / "norm.parquet"
    run = folder / "run"  # the engine's run folder: bodies in partitions (storage.runs)
    jobs: dict[str, Callable[[], object]] = {
        "baseline read+write": lambda: pl.read_csv(csv, infer_schema=False).write_parquet(
            folder / "base.parquet"),
        "ingest": lambda: ingest(csv, normalised),
        "baseline pass": lambda: pl.scan_parquet(normalised).with_columns(
            d=pl.col("mass") / pl.col("radius") ** 3).filter(pl.col("d") > 1).collect(),
        "derive+rules": lambda: check_table(pl.scan_parquet(normalised), folder / "run",
                                            CheckOptions(artefacts=False)),
        "rules only": lambda: evaluate(scan_bodies(run), all_rules()).collect(),
        "artefacts": lambda: artefacts.detect_artefacts(scan_bodies(run),
                                                    artefacts.ARTEFACT_FIELDS),
    }
    queue.put(_timed(jobs[name]))


def _run_stage(name: str, workdir: Path) -> Timing:
    context = multiprocessing.get_context("spawn")
    queue: multiprocessing.Queue[Timing] = context.Queue()
    child = context.Process(target=_stage, args=(name, str(workdir), queue))
    child.start()
    child.join()
    if child.exitcode != 0:
        raise RuntimeError(f"bench stage '{name}' failed (exit code {child.exitcode})")
    return queue.get(timeout=5)


def run_bench(n_bodies: int, seed: int, workdir: Path | None) -> int:
    """Generate a demo catalogue, time every stage, print a table of seconds, MiB and ratios."""
    from bodycensus.demo import write_demo

    with tempfile.TemporaryDirectory(prefix="bodycensus-bench-", dir=workdir) as tmp:
        folder = Path(tmp)
        write_demo(folder / "demo.csv", n_bodies=n_bodies, seed=seed)
        size = (folder / "demo.csv").stat().st_size / 2**20
        print(f"bench: {n_bodies:,} bodies, {size:,.0f} MiB CSV, seed {seed}")
        results: dict[str, tuple[float, float]] = {}
        for name in ("baseline read+write", "ingest", "baseline pass", "derive+rules"):
            results[name] = _run_stage(name, folder)
        for name in ("rules only", "artefacts"):
            results[name] = _run_stage(name, folder)
    _print_table(results, n_bodies)
    return 0


def _print_table(results: dict[str, tuple[float, float]], n_bodies: int) -> None:
    print(f"{'stage':<22}{'seconds':>9}{'peak MiB':>10}{'bodies/s':>12}")
    for name, (seconds, mib) in results.items():
        print(f"{name:<22}{seconds:>9.2f}{mib:>10.0f}{n_bodies / seconds:>12,.0f}")

    def ratio(a: str, b: str) -> float:
        return results[a][0] / results[b][0]

    print(f"ratio ingest / baseline read+write:      {ratio('ingest', 'baseline read+write'):.2f}")
    print(f"ratio derive+rules / baseline pass:      {ratio('derive+rules', 'baseline pass'):.2f}")
    print(f"ratio artefacts / rules only (goal <0.5): {ratio('artefacts', 'rules only'):.2f}")
    print(f"ratio artefacts / derive+rules:          {ratio('artefacts', 'derive+rules'):.2f}")
    sys.stdout.flush()
