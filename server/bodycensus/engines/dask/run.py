"""A whole check on a Dask cluster: ingest each file on a worker, compute the catalogue-wide
facts with Dask, bring each system into one partition (Dask's own shuffle when the files are not
split by system), run ``engines.partition.check_partition`` on every partition on a worker, and
write the run folder the local engine writes.

Stages, each reported through ``progress`` (the local engine's names, plus two):

1. ``read``: one task per file runs the local ingest (``input.dataset``); a bad file raises the
   same one-line ``IngestError`` the local engine raises, re-raised here by Dask.
2. ``derive``: the catalogue-wide facts (``engines.dask.facts``); then one task per file adds
   each body's system bucket (``partition.with_partition``).
3. ``systems`` (every system lies in one file: no shuffle) or ``shuffle`` (a system spans files:
   ``DataFrame.shuffle`` on the bucket), from the per-file buckets (two Dask reductions).
4. ``rules``: one task per partition checks whole systems, writes its bodies to
   ``bodies/part-NNNNN.parquet`` and returns its findings and coverage counts, merged exactly as
   the local engine merges them.
5. ``artefacts`` and ``write``: the artefact detector and the summary, read from the written
   parts by the local code (streaming, on the client).

Workers must see the output folder at the same path as the client (a shared file system); a
local cluster does.
"""

from __future__ import annotations

import os
import time
from collections.abc import Sequence
from pathlib import Path

import dask.dataframe as dd
import pandas as pd
import polars as pl
from dask.base import compute
from dask.delayed import delayed
from distributed import Client, Future, as_completed

from bodycensus.durable import fsync_path
from bodycensus.engines.dask.cluster import connect
from bodycensus.engines.dask.facts import facts_on_dask
from bodycensus.engines.local import CheckOptions, CheckResult, finish_run
from bodycensus.engines.partition import (
    PART,
    CatalogueFacts,
    check_partition,
    judge,
    merge_findings,
    partition_count,
    with_partition,
)
from bodycensus.input.dataset import dataset_files, merge_reports, row_offsets, shift_rows
from bodycensus.input.ingest import IngestReport, ingest
from bodycensus.progress import Progress, quiet
from bodycensus.science.rules.graph import Chains
from bodycensus.storage.runs import write_bodies_file

# Buckets of the system key: so many that two systems share one only by a hash collision (which
# makes a shuffle more likely, never wrong); a partition then holds whole buckets.
SYSTEM_BUCKETS = 2**32 - 1
ROOTS = "roots.parquet"  # where each chain of parents ends, for the workers (removed at the end)


def check_on_dask(spec: str | Path, workdir: Path, options: CheckOptions | None = None,
                  progress: Progress | None = None, scheduler: str | None = None,
                  client: Client | None = None) -> CheckResult:
    """Check the dataset ``spec`` on Dask (``client``, else ``scheduler``, else a local cluster)
    and write the run into ``workdir``; the same result the local engine gives."""
    options, files = options or CheckOptions(), dataset_files(spec)
    if client is not None:
        return _run(client, files, workdir, options, progress or quiet)
    with connect(scheduler) as connected:
        return _run(connected, files, workdir, options, progress or quiet)


def _run(client: Client, files: Sequence[Path], workdir: Path, options: CheckOptions,
         progress: Progress) -> CheckResult:
    started = time.monotonic()
    workdir.mkdir(parents=True, exist_ok=True)
    parts, report = _ingest(client, files, workdir / "normalised", options, progress)
    progress("derive", 0.0)
    frame = _read(parts)
    facts, chains = facts_on_dask(frame, parts, options.family_overrides, options.orbit_settings)
    _place_in_systems(client, parts, chains, workdir / ROOTS)
    del chains
    frame = _by_system(_read(parts), partition_count(report.rows, options.partition_rows),
                       progress)
    findings, counts = _check_partitions(client, frame, workdir, facts, progress)
    for part in [*parts, workdir / ROOTS]:
        part.unlink(missing_ok=True)
    (workdir / "normalised").rmdir()
    result = finish_run(workdir, findings, counts, facts, report, options, progress)
    result.summary["seconds"] = round(time.monotonic() - started, 3)
    return result


def _read(parts: Sequence[Path]) -> dd.DataFrame:
    """The normalised files as one Dask frame, a partition per file, nulls kept (Arrow types)."""
    return dd.read_parquet([str(p) for p in parts], split_row_groups=False,
                           dtype_backend="pyarrow")


def _ingest(client: Client, files: Sequence[Path], folder: Path, options: CheckOptions,
            progress: Progress) -> tuple[list[Path], IngestReport]:
    """Ingest every file on the workers (one task each), then number the rows on."""
    folder.mkdir(parents=True, exist_ok=True)
    progress("read", 0.0)
    parts = [folder / f"part-{n:05d}.parquet" for n in range(len(files))]
    futures = client.map(ingest, files, parts, pure=False,
                         map_overrides=dict(options.map_overrides),
                         unit_overrides=dict(options.unit_overrides), limits=options.limits,
                         hosts=options.hosts, nulls=options.nulls)
    reports: list[IngestReport] = client.gather(futures)
    report = merge_reports(files, reports)
    client.gather(client.map(shift_rows, parts, row_offsets(reports), pure=False))
    progress("read", 1.0, rows=report.rows)
    return parts, report


def _add_bucket(part: Path, roots: Path, cycle_ids: pl.Series) -> None:
    """Add each body's system bucket (``_part``) to one normalised file (a worker's task; the
    file is replaced atomically, so a retried task does it again from the same input)."""
    # bucketing reads the roots and loops only; the repeated hashes served the facts
    chains = Chains(pl.read_parquet(roots), cycle_ids, pl.Series("_hash", [], pl.UInt64))
    placed = part.with_name(part.name + f".{os.getpid()}.placed")
    with_partition(pl.scan_parquet(part).drop(PART, strict=False), chains,
                   SYSTEM_BUCKETS).sink_parquet(placed)
    os.replace(placed, part)


def _place_in_systems(client: Client, parts: Sequence[Path], chains: Chains,
                      roots: Path) -> None:
    """Write the chains' roots where the workers read them, then bucket every file there."""
    chains.roots.write_parquet(roots)
    fsync_path(roots)
    client.gather(client.map(_add_bucket, parts, roots=roots, cycle_ids=chains.cycle_ids,
                             pure=False))


def spans_partitions(frame: dd.DataFrame, key: str = PART) -> bool:
    """Whether any value of ``key`` lies in more than one partition: the partitions' distinct
    values counted one partition at a time exceed the distinct values of the whole."""
    distinct = frame[key].map_partitions(lambda values: values.drop_duplicates())
    per_partition, overall = compute(distinct.count(), frame[key].nunique())
    return bool(per_partition > overall)


def _by_system(frame: dd.DataFrame, partitions: int, progress: Progress) -> dd.DataFrame:
    """The frame with every system inside one partition: shuffled by Dask when needed."""
    if not spans_partitions(frame):
        progress("systems", 1.0)  # each file holds whole systems already: no shuffle
        return frame
    progress("shuffle", 0.0)  # a system spans files: Dask shuffles the bodies by system
    return frame.shuffle(PART, npartitions=max(partitions, frame.npartitions))


def check_systems(part: pd.DataFrame, number: int, folder: Path, facts: CatalogueFacts
                  ) -> tuple[pl.DataFrame, pl.DataFrame]:
    """Check one partition of whole systems (a worker's task): its bodies are written to
    ``folder/part-NNNNN.parquet`` (atomically: a retried task writes it again); its flagged
    rows (judged with every other partition's at the end) and coverage counts come back."""
    result = check_partition(pl.from_pandas(part.reset_index(drop=True)), facts)
    write_bodies_file(result.bodies, folder / f"part-{number:05d}.parquet")
    return result.flagged, result.coverage


def _check_partitions(client: Client, frame: dd.DataFrame, workdir: Path,
                      facts: CatalogueFacts, progress: Progress
                      ) -> tuple[pl.DataFrame, pl.DataFrame]:
    """Run ``check_systems`` on every partition; the merged findings and coverage counts."""
    folder = workdir / "bodies"
    folder.mkdir(parents=True, exist_ok=True)
    tasks = [delayed(check_systems)(part, number, folder, facts)
             for number, part in enumerate(frame.to_delayed())]
    futures: list[Future[tuple[pl.DataFrame, pl.DataFrame]]] = client.compute(tasks)
    progress("rules", 0.0)
    for done, _ in enumerate(as_completed(futures), start=1):
        progress("rules", done / len(futures))
    results: list[tuple[pl.DataFrame, pl.DataFrame]] = client.gather(futures)
    flagged = judge([rows for rows, _ in results], facts.rules())  # one plan for all
    findings = merge_findings([flagged], facts.rules())
    return findings, pl.concat([counts for _, counts in results])
