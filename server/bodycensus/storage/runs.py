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
from bodycensus.storage.sorted_index import footer, groups_between, read_groups, rows_with
from bodycensus.storage.sorted_spill import AppendingWriter

BODY_ROW_GROUP = 2048  # bodies per row group of a bodies file (``write_bodies_file``)
BODY_INDEX = "body_index.parquet"  # id -> the partition file and system that hold it
SYSTEM_ORDER = "bodycensus.system_order"  # a bodies file's metadata: its rows in system order
KIN_IN_SYSTEM = "kin"  # ... and each body's parent, siblings and moons in its own system
BY_SYSTEM = "system"  # ... but not always its kin
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
    """Write one file of a run's bodies (its one file or a partition) in system order (blank
    systems last, each system's rows in their order), in row groups of ``BODY_ROW_GROUP`` with
    statistics, compressed with ``BODY_COMPRESSION`` (fsync, then rename): a body's or a
    system's page decodes the one or two small groups whose system range holds it
    (``bodies_of_systems``), not a whole partition."""
    bodies = frame.collect() if isinstance(frame, pl.LazyFrame) else frame
    if "system" not in bodies.columns:
        return write_parquet_atomic(bodies, dest, BODY_ROW_GROUP, compression=BODY_COMPRESSION)
    ordered = bodies.sort("system", nulls_last=True, maintain_order=True)
    order = KIN_IN_SYSTEM if _kin_in_system(ordered) else BY_SYSTEM
    return write_parquet_atomic(ordered, dest, BODY_ROW_GROUP, {SYSTEM_ORDER: order},
                                BODY_COMPRESSION)


def _kin_in_system(bodies: pl.DataFrame) -> bool:
    """Whether every body's moons and siblings share one system, and its parent's (where the
    file holds it): then a body's parent, siblings and moons in this file are all in the
    rows of its own system. (A catalogue whose ``system`` cells disagree with its chains of
    parents breaks it; its pages read the whole file.)"""
    if "parent" not in bodies.columns:
        return True
    system = pl.col("system").fill_null("")  # a blank system is one system here
    kids = bodies.lazy().filter(pl.col("parent").is_not_null()).select("parent", system)
    mixed = kids.group_by("parent").agg(pl.col("system").n_unique() > 1).select(
        pl.col("system").any())
    apart = (kids.join(bodies.lazy().select(pl.col("id").alias("parent"),
                                            system.alias("own")), on="parent")
             .select((pl.col("system") != pl.col("own")).any()))
    found = pl.collect_all([mixed, apart])
    return not any(bool(f.item()) for f in found)


def in_list_order(findings: pl.LazyFrame, descending: bool = False) -> pl.LazyFrame:
    """Findings in the Findings list's severity order: most serious first (last when
    ``descending``), then furthest past the limit, then by body; ties keep their order."""
    return findings.sort([rank_expr(), "margin", "body"], descending=[descending, True, False],
                         nulls_last=True, maintain_order=True)


def write_findings(findings: pl.DataFrame | pl.LazyFrame, folder: Path) -> Path:
    """Write the run's findings as ``findings.parquet`` in the list's default order, in small
    row groups with statistics, the order named in the file's metadata, and a copy sorted by
    body and one by system (``findings_of``) (each: fsync, then rename). Give a plan to hold
    the findings once: the copies are written a slice at a time (``_write_sorted_copy``)."""
    ordered = in_list_order(findings.lazy()).collect()
    for column, name in FINDINGS_BY.items():
        if column in ordered.columns:
            _write_sorted_copy(ordered, column, folder / name)
    return write_parquet_atomic(ordered, folder / FINDINGS, FINDINGS_ROW_GROUP,
                                {ORDER_KEY: LIST_ORDER})


COPY_SLICE = 32 * FINDINGS_ROW_GROUP  # findings gathered at a time into a sorted copy


def _write_sorted_copy(findings: pl.DataFrame, column: str, dest: Path) -> None:
    """``findings`` sorted by ``column`` (stable, blanks last) written to ``dest``, gathered
    a slice at a time from one sort order: a whole sorted copy beside the findings made the
    check's peak at 30M bodies (700,000 findings: 325 MB -> 1.19 GB while they were written)."""
    order = findings.select(pl.int_range(pl.len(), dtype=pl.UInt32).sort_by(
        column, nulls_last=True, maintain_order=True)).to_series()
    with AppendingWriter(dest, findings.schema, FINDINGS_ROW_GROUP) as out:
        for start in range(0, order.len(), COPY_SLICE):
            out.write(findings[order.slice(start, COPY_SLICE)])


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
    partition file that holds it and its system, sorted by id in small row groups with
    statistics, so a body's page reads the row groups of one system in one partition, not all
    (fsync, then rename). None for a one-file run."""
    parts = _parts(folder)
    if not parts:
        return None
    ids = [pl.scan_parquet(p).select("id", part=pl.lit(p.name), system=_system_of(p))
           for p in parts]
    return write_parquet_atomic(pl.concat(ids).filter(pl.col("id").is_not_null()).sort("id"),
                                folder / BODY_INDEX, INDEX_ROW_GROUP)


def _system_of(path: Path) -> pl.Expr:
    """The ``system`` column of a bodies file (a null string where it has none)."""
    has = "system" in pl.read_parquet_schema(path)
    return pl.col("system") if has else pl.lit(None, pl.String)


def scan_bodies_around(folder: Path, ids: Sequence[str]) -> pl.LazyFrame:
    """The bodies around ``ids``, lazily: with a body come its parent, siblings and moons (a
    partition holds whole chains of parents). Through the body index where the run has one
    (its footer kept: the look-up reads one or two row groups): the row groups of the body's
    system in its partition where the file keeps a body's kin in its system and the id is
    there once, else its whole partitions; without the index, every body."""
    index = folder / BODY_INDEX
    if not index.is_file():
        return scan_bodies(folder)
    found = rows_with(index, "id", ids)
    if "system" not in found.columns or found["system"].null_count() or \
            found["id"].is_duplicated().any():
        return scan_parts(folder, found["part"].to_list())
    frames = []
    for (part,), rows in found.group_by("part", maintain_order=True):
        path = folder / "bodies" / str(part)
        if _stored_order(path) == KIN_IN_SYSTEM:
            frames.append(bodies_of_systems(path, rows["system"].to_list()).lazy())
        else:
            frames.append(pl.scan_parquet(path))
    return pl.concat(frames, how="vertical") if frames else scan_bodies(folder).head(0)


def _stored_order(path: Path) -> str | None:
    """How a bodies file is ordered (``SYSTEM_ORDER`` in its metadata), from its kept footer."""
    meta = footer(path, "system").metadata.metadata or {}
    value = meta.get(SYSTEM_ORDER.encode())
    return value.decode() if value is not None else None


def in_system_order(path: Path) -> bool:
    """Whether the bodies file ``path`` stores its rows in system order."""
    return _stored_order(path) in (KIN_IN_SYSTEM, BY_SYSTEM)


def bodies_of_systems(path: Path, systems: Sequence[str],
                      columns: Sequence[str] | None = None) -> pl.DataFrame:
    """The rows of the row groups of the bodies file ``path`` whose ``system`` range can hold
    one of ``systems`` (not blank), from its kept footer: a superset of those systems' bodies,
    in the file's order (those of ``columns`` it has, or all)."""
    found = footer(path, "system")
    groups = sorted({g for s in systems for g in groups_between(found, s, s)})
    have = found.metadata.schema.names
    return read_groups(path, found, groups,
                       None if columns is None else [c for c in columns if c in have])


def scan_findings(folder: Path) -> pl.LazyFrame:
    """Every finding of the run, lazily."""
    return pl.scan_parquet(folder / FINDINGS)


def read_artefacts(folder: Path) -> pl.DataFrame:
    """The run's distribution artefacts (a small table)."""
    return pl.read_parquet(folder / "artefacts.parquet")
