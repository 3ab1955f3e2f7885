"""A whole check on a Dask cluster: ingest each file on a worker, bring each system into one
partition (Dask's own shuffle when the files are not split by system), check every partition on a
worker, and write the run folder the local engine writes.

Steps, each reported through ``progress``:

1. ``read``: one task per file runs the local ingest (``input.dataset``); a bad file raises the
   same one-line ``IngestError`` the local engine raises, re-raised here by Dask.
2. ``partition``: whether any system spans two files, from the per-file system keys (a Dask
   reduction); if one does, ``shuffle`` on the system key (``DataFrame.shuffle``).
3. ``check``: one task per partition derives the physics and runs the rules on whole systems,
   writes its bodies to ``bodies/part-NNNNN.parquet`` and returns its findings.
4. ``artefacts`` and ``write``: coverage, the artefact detector and the summary, read from the
   written parts by the local code.

Workers must see the output folder at the same path as the client (a shared file system);
a local cluster does.
"""

from __future__ import annotations

import os
import time
from collections.abc import Mapping, Sequence
from pathlib import Path

import dask.dataframe as dd
import pandas as pd
import polars as pl
from dask.base import compute
from dask.delayed import delayed
from distributed import Client, Future, as_completed

from bodycensus.durable import fsync_path
from bodycensus.engines.dask.cluster import connect
from bodycensus.engines.local import CheckOptions, CheckResult, with_families
from bodycensus.engines.summary import build_summary
from bodycensus.input.dataset import dataset_files, merge_reports, row_offsets, shift_rows
from bodycensus.input.ingest import IngestReport, ingest
from bodycensus.progress import Progress, quiet
from bodycensus.science import artefacts as artefact_detector
from bodycensus.science.artefacts import ARTEFACT_FIELDS
from bodycensus.science.families import family_mapping
from bodycensus.science.rules import all_rules
from bodycensus.science.rules.base import FINDING_SCHEMA, coverage, evaluate
from bodycensus.science.rules.context import derive
from bodycensus.science.rules.graph import cycle_members
from bodycensus.science.rules.orbit import OrbitSettings

SYSTEM_KEY = "_system_key"  # the system column; bodies without one share the key ""


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
    frame = dd.read_parquet([str(p) for p in parts], split_row_groups=False,
                            dtype_backend="pyarrow")
    labels = sorted(frame["label"].dropna().unique().compute().tolist())
    families = family_mapping(labels, dict(options.family_overrides))
    frame = _by_system(frame, progress)
    findings = _check_partitions(client, frame, workdir, families, options, progress)
    for part in parts:
        part.unlink(missing_ok=True)
    (workdir / "normalised").rmdir()
    result = _finish(workdir, findings, families, report, options, progress)
    result.summary["seconds"] = round(time.monotonic() - started, 3)
    return result


def _ingest(client: Client, files: Sequence[Path], folder: Path, options: CheckOptions,
            progress: Progress) -> tuple[list[Path], IngestReport]:
    """Ingest every file on the workers (one task each), then number the rows on."""
    folder.mkdir(parents=True, exist_ok=True)
    progress("read", 0.0)
    parts = [folder / f"part-{n:05d}.parquet" for n in range(len(files))]
    futures = client.map(ingest, files, parts, pure=False,
                         map_overrides=dict(options.map_overrides),
                         unit_overrides=dict(options.unit_overrides), limits=options.limits)
    reports: list[IngestReport] = client.gather(futures)
    report = merge_reports(files, reports)
    client.gather(client.map(shift_rows, parts, row_offsets(reports), pure=False))
    progress("read", 1.0, rows=report.rows)
    return parts, report


def _system_keys(frame: pd.DataFrame) -> pd.DataFrame:
    """The distinct system keys of one partition."""
    keys = frame["system"].fillna("").astype("string[pyarrow]").drop_duplicates()
    return pd.DataFrame({SYSTEM_KEY: keys.to_numpy()})


def spans_partitions(frame: dd.DataFrame) -> bool:
    """Whether any system has bodies in more than one partition: the partitions' distinct keys
    counted together exceed the distinct keys of the whole (two Dask reductions)."""
    keys = frame.map_partitions(_system_keys, meta={SYSTEM_KEY: "string[pyarrow]"})
    per_partition, overall = compute(keys[SYSTEM_KEY].count(),
                                          keys[SYSTEM_KEY].nunique())
    return bool(per_partition > overall)


def _by_system(frame: dd.DataFrame, progress: Progress) -> dd.DataFrame:
    """The frame with every system inside one partition: shuffled by Dask when needed."""
    frame = frame.assign(**{SYSTEM_KEY: frame["system"].fillna("")})
    if not spans_partitions(frame):
        progress("systems", 1.0)  # the files are split by system already: no shuffle
        return frame
    progress("shuffle", 0.0)  # a system spans files: Dask shuffles by system
    return frame.shuffle(SYSTEM_KEY, npartitions=frame.npartitions)


def check_systems(part: pd.DataFrame, number: int, folder: Path,
                  family_overrides: Mapping[str, str], orbit_settings: OrbitSettings
                  ) -> pl.DataFrame:
    """Derive and check one partition of whole systems (a worker's task); its bodies are
    written to ``folder/part-NNNNN.parquet`` (atomically: a retried task writes it again)."""
    table = pl.from_pandas(part.drop(columns=[SYSTEM_KEY]).reset_index(drop=True)).lazy()
    labelled, _ = with_families(table, family_overrides)
    context = derive(labelled, cycle_members(labelled))
    dest = folder / f"part-{number:05d}.parquet"
    tmp = dest.with_name(dest.name + f".{os.getpid()}.tmp")
    context.sink_parquet(tmp)
    fsync_path(tmp)
    os.replace(tmp, dest)
    return evaluate(pl.scan_parquet(dest), all_rules(orbit_settings)).collect()


def _check_partitions(client: Client, frame: dd.DataFrame, workdir: Path,
                      families: dict[str, str], options: CheckOptions,
                      progress: Progress) -> pl.DataFrame:
    """Run ``check_systems`` on every partition; the findings of all, in partition order."""
    folder = workdir / "bodies"
    folder.mkdir(parents=True, exist_ok=True)
    tasks = [delayed(check_systems)(part, number, folder, options.family_overrides,
                                         options.orbit_settings)
             for number, part in enumerate(frame.to_delayed())]
    futures: list[Future[pl.DataFrame]] = client.compute(tasks)
    progress("check", 0.0)
    for done, _ in enumerate(as_completed(futures), start=1):
        progress("check", done / len(futures))
    found: list[pl.DataFrame] = client.gather(futures)
    return pl.concat(found, how="vertical_relaxed") if found else pl.DataFrame(
        schema=FINDING_SCHEMA)


def _finish(workdir: Path, findings: pl.DataFrame, families: dict[str, str],
            report: IngestReport, options: CheckOptions, progress: Progress) -> CheckResult:
    """Coverage, artefacts and the summary over the written parts; every file in place."""
    findings = findings.sort("_row", "rule")
    _write(findings, workdir / "findings.parquet")
    bodies = pl.scan_parquet(sorted((workdir / "bodies").glob("part-*.parquet")))
    rule_coverage = coverage(bodies, all_rules(options.orbit_settings))
    _write(rule_coverage, workdir / "coverage.parquet")
    progress("artefacts", 0.0)
    found = (artefact_detector.detect_artefacts(bodies, ARTEFACT_FIELDS) if options.artefacts
             else pl.DataFrame(schema=artefact_detector.ARTEFACT_SCHEMA))
    _write(found, workdir / "artefacts.parquet")
    progress("write", 1.0)
    summary = build_summary(bodies, findings, found, families, report)
    return CheckResult(findings, found, rule_coverage, workdir / "bodies", summary, report,
                       families)


def _write(frame: pl.DataFrame, path: Path) -> None:
    """Write Parquet to a temporary name, fsync, then rename into place."""
    tmp = path.with_name(path.name + ".tmp")
    frame.write_parquet(tmp)
    fsync_path(tmp)
    os.replace(tmp, path)
