"""The engine's files of a checked catalogue folder as lazy frames, whichever layout wrote them.

A folder written by ``engines.local`` holds ``bodies.parquet`` (one file) or ``bodies/*.parquet``
(one file per partition), with ``findings.parquet`` and ``artefacts.parquet`` beside them. Triage
and comparison read only through these functions, so a change of layout is made here once.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path

import polars as pl

from bodycensus.durable import fsync_path
from bodycensus.errors import NotFound

BODY_INDEX = "body_index.parquet"  # id -> the partition file that holds it (partitioned runs)
INDEX_ROW_GROUP = 8192  # ids per row group: a look-up decodes one or two of them


def is_run(folder: Path) -> bool:
    """Whether ``folder`` holds a checked catalogue (``check --keep`` or the data directory)."""
    return folder.is_dir() and (folder / "findings.parquet").is_file()


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


def write_body_index(folder: Path) -> Path | None:
    """Write ``body_index.parquet`` for a partitioned run: every id with the name of the
    partition file that holds it, sorted by id in small row groups with statistics, so a body's
    page reads one partition, not all (fsync, then rename). None for a one-file run."""
    parts = _parts(folder)
    if not parts:
        return None
    ids = [pl.scan_parquet(p).select("id", part=pl.lit(p.name)) for p in parts]
    dest = folder / BODY_INDEX
    tmp = dest.with_name(dest.name + ".tmp")
    (pl.concat(ids).filter(pl.col("id").is_not_null()).sort("id")
     .sink_parquet(tmp, row_group_size=INDEX_ROW_GROUP, statistics=True))
    fsync_path(tmp)
    os.replace(tmp, dest)
    return dest


def scan_bodies_around(folder: Path, ids: Sequence[str]) -> pl.LazyFrame:
    """The bodies of the partitions that hold ``ids``, lazily: with a body come its parent,
    siblings and moons (a partition holds whole chains of parents). Through the body index where
    the run has one (the row groups' statistics prune the look-up), else every body."""
    index = folder / BODY_INDEX
    if not index.is_file():
        return scan_bodies(folder)
    names = (pl.scan_parquet(index).filter(pl.col("id").is_in(list(ids))).select("part")
             .unique().collect()["part"].to_list())
    if not names:
        return scan_bodies(folder).head(0)
    return pl.scan_parquet([folder / "bodies" / name for name in sorted(names)])


def scan_findings(folder: Path) -> pl.LazyFrame:
    """Every finding of the run, lazily."""
    return pl.scan_parquet(folder / "findings.parquet")


def read_artefacts(folder: Path) -> pl.DataFrame:
    """The run's distribution artefacts (a small table)."""
    return pl.read_parquet(folder / "artefacts.parquet")
