"""The engine's files of a checked catalogue folder as lazy frames, whichever layout wrote them.

A folder written by ``engines.local`` holds ``bodies.parquet`` (one file) or ``bodies/*.parquet``
(one file per partition), with ``findings.parquet`` and ``artefacts.parquet`` beside them. Triage
and comparison read only through these functions, so a change of layout is made here once.

The findings are stored in the order the Findings list shows by default (most serious first,
then furthest past the limit, then body), in small row groups with statistics: a page of that
list is a slice that decodes one or two row groups, and a severity filter skips the others.
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Sequence
from pathlib import Path
from typing import Final, Literal

import polars as pl

from bodycensus.durable import fsync_path
from bodycensus.errors import NotFound
from bodycensus.science.severity import rank_expr
from bodycensus.storage.sorted_index import rows_with

BODY_ROW_GROUP = 8192  # bodies per row group of a bodies file (``write_bodies_file``)
BODY_INDEX = "body_index.parquet"  # id -> the partition file that holds it (partitioned runs)
INDEX_ROW_GROUP = 8192  # ids per row group: a look-up decodes one or two of them
FINDINGS = "findings.parquet"
FINDINGS_ROW_GROUP = 2048  # findings per row group: a page of 50 decodes one or two
FINDINGS_BY = {"body": "findings_by_body.parquet",  # copies of the findings sorted by a column
               "system": "findings_by_system.parquet"}
FEW_KEYS = 16  # keys looked up in a copy; more are a filter of every finding
ORDER_KEY = "bodycensus.order"  # the findings file's metadata: the order its rows are in
LIST_ORDER = "severity"  # ... the Findings list's default order (``in_list_order``)
# The bodies' files: lz4 wrote a partition of 250,000 bodies (116 columns) in half zstd's
# default time and read it as fast, for 15 % more bytes (measured, derive-results.md).
BODY_COMPRESSION: Final[Literal["lz4"]] = "lz4"


def is_run(folder: Path) -> bool:
    """Whether ``folder`` holds a checked catalogue (``check --keep`` or the data directory)."""
    return folder.is_dir() and (folder / FINDINGS).is_file()


def scan_bodies(folder: Path) -> pl.LazyFrame:
    """Every body of the run, lazily (the normalised fields, plus what the run stored beside)."""
    whole = folder / "bodies.parquet"
    if whole.is_file():
        return pl.scan_parquet(whole)
    parts = _parts(folder)
    if not parts:
        raise NotFound(f"{folder} holds no bodies; check the catalogue again")
    return pl.scan_parquet(parts)


def _parts(folder: Path) -> list[Path]:
    """The partition files of a partitioned run, in order (none for a one-file run)."""
    return sorted((folder / "bodies").glob("*.parquet"))


def bodies_files(folder: Path) -> list[Path]:
    """The files that hold the run's bodies, in order: its partitions, or its one file."""
    whole = folder / "bodies.parquet"
    return [whole] if whole.is_file() else _parts(folder)


def scan_parts(folder: Path, names: Sequence[str]) -> pl.LazyFrame:
    """The bodies of the named partition files only (lazy; no rows when none is named)."""
    if not names:
        return scan_bodies(folder).head(0)
    return pl.scan_parquet([folder / "bodies" / name for name in sorted(set(names))])


def write_parquet_atomic(frame: pl.LazyFrame | pl.DataFrame, dest: Path, row_group_size: int,
                         metadata: dict[str, str] | None = None,
                         compression: Literal["zstd", "lz4"] = "zstd") -> Path:
    """Write Parquet in row groups of ``row_group_size`` with statistics (and ``metadata``) to
    a temporary name, fsync it, then rename it into place."""
    tmp = dest.with_name(f"{dest.name}.{secrets.token_hex(4)}.tmp")  # one per writer
    if isinstance(frame, pl.LazyFrame):
        frame.sink_parquet(tmp, row_group_size=row_group_size, statistics=True,
                           metadata=metadata, compression=compression)
    else:
        frame.write_parquet(tmp, row_group_size=row_group_size, statistics=True,
                            metadata=metadata, compression=compression)
    fsync_path(tmp)
    os.replace(tmp, dest)
    return dest


def write_bodies_file(frame: pl.LazyFrame | pl.DataFrame, dest: Path) -> Path:
    """Write one file of a run's bodies (its one file or a partition) in row groups of
    ``BODY_ROW_GROUP`` with statistics, compressed with ``BODY_COMPRESSION`` (fsync, then
    rename): a body's page decodes the one small group that holds it, not one of polars'
    default ~125k rows (twice as long at 1M bodies)."""
    return write_parquet_atomic(frame, dest, BODY_ROW_GROUP, compression=BODY_COMPRESSION)


def in_list_order(findings: pl.LazyFrame, descending: bool = False) -> pl.LazyFrame:
    """Findings in the Findings list's severity order: most serious first (last when
    ``descending``), then furthest past the limit, then by body; ties keep their order."""
    return findings.sort([rank_expr(), "margin", "body"], descending=[descending, True, False],
                         nulls_last=True, maintain_order=True)


def write_findings(findings: pl.DataFrame, folder: Path) -> Path:
    """Write the run's findings as ``findings.parquet`` in the list's default order, in small
    row groups with statistics, the order named in the file's metadata, and a copy sorted by
    body and one by system (``findings_of``) (each: fsync, then rename)."""
    ordered = in_list_order(findings.lazy()).collect()
    for column, name in FINDINGS_BY.items():
        if column in ordered.columns:
            write_parquet_atomic(ordered.sort(column, nulls_last=True, maintain_order=True),
                                 folder / name, FINDINGS_ROW_GROUP)
    return write_parquet_atomic(ordered, folder / FINDINGS, FINDINGS_ROW_GROUP,
                                {ORDER_KEY: LIST_ORDER})


def findings_of(folder: Path, column: str, keys: Sequence[str]) -> pl.LazyFrame:
    """The findings whose ``column`` (``body`` or ``system``) is one of ``keys``, in the list's
    order within each key: for a few keys, from the copy sorted by that column where the run
    has it (a look-up of one row group per key), else a filter of every finding (which reads
    only the columns the caller uses: for the 2,000 bodies a mass-radius diagram marks, 17 ms
    against 183 ms for their row groups' every column at 10M bodies)."""
    copy = folder / FINDINGS_BY[column]
    if not copy.is_file() or len(keys) > FEW_KEYS:
        return scan_findings(folder).filter(pl.col(column).is_in(list(keys)))
    return rows_with(copy, column, keys).lazy()


def in_stored_order(folder: Path, sort: str) -> bool:
    """Whether the findings file is stored in the order ``sort`` asks (a sort it can skip)."""
    if sort != LIST_ORDER:
        return False
    return pl.read_parquet_metadata(folder / FINDINGS).get(ORDER_KEY) == LIST_ORDER


def write_body_index(folder: Path) -> Path | None:
    """Write ``body_index.parquet`` for a partitioned run: every id with the name of the
    partition file that holds it, sorted by id in small row groups with statistics, so a body's
    page reads one partition, not all (fsync, then rename). None for a one-file run."""
    parts = _parts(folder)
    if not parts:
        return None
    ids = [pl.scan_parquet(p).select("id", part=pl.lit(p.name)) for p in parts]
    return write_parquet_atomic(pl.concat(ids).filter(pl.col("id").is_not_null()).sort("id"),
                                folder / BODY_INDEX, INDEX_ROW_GROUP)


def scan_bodies_around(folder: Path, ids: Sequence[str]) -> pl.LazyFrame:
    """The bodies of the partitions that hold ``ids``, lazily: with a body come its parent,
    siblings and moons (a partition holds whole chains of parents). Through the body index where
    the run has one (its footer kept: the look-up reads one or two row groups), else every
    body."""
    index = folder / BODY_INDEX
    if not index.is_file():
        return scan_bodies(folder)
    return scan_parts(folder, rows_with(index, "id", ids, ["id", "part"])["part"].to_list())


def scan_findings(folder: Path) -> pl.LazyFrame:
    """Every finding of the run, lazily."""
    return pl.scan_parquet(folder / FINDINGS)


def read_artefacts(folder: Path) -> pl.DataFrame:
    """The run's distribution artefacts (a small table)."""
    return pl.read_parquet(folder / "artefacts.parquet")
