"""Look-ups in a Parquet file sorted by one text column (the name index, the body and system
indexes): the row groups that can hold the keys are found from the file's footer, parsed once
per file version and kept, and only those groups are read.

Hand-written because a polars scan parses the whole footer on every query, and the footer is
most of the cost of a look-up in a big sorted index (the name index of 10M bodies has ~10,000
row groups); pyarrow reads chosen row groups with a footer parsed before.
"""

from __future__ import annotations

import bisect
import functools
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import polars as pl
import pyarrow.parquet as pq


@dataclass(frozen=True)
class Footer:
    """A sorted file's parsed footer and each row group's least and greatest key."""

    metadata: Any  # pyarrow.parquet.FileMetaData
    lows: list[str]
    highs: list[str]
    complete: bool  # every group has its range (else every group is read)


@functools.lru_cache(maxsize=512)  # the indexes and every partition of a 30M-body run
def _footer(path: str, column: str, stamp: tuple[int, int, int]) -> Footer:
    """The footer of ``path`` (``stamp``: inode, mtime, size), parsed once per version. A group
    of blank keys only (a file sorted with blanks last) holds no key: it is given the range end
    of the group before, so the ranges stay in order."""
    metadata = pq.read_metadata(path)
    at = metadata.schema.names.index(column)
    lows: list[str] = []
    highs: list[str] = []
    for group in range(metadata.num_row_groups):
        stats = metadata.row_group(group).column(at).statistics
        if stats is not None and stats.has_null_count and \
                stats.null_count == metadata.row_group(group).num_rows and highs:
            lows.append(highs[-1])
            highs.append(highs[-1])
            continue
        if stats is None or not stats.has_min_max or not isinstance(stats.min, str):
            return Footer(metadata, [], [], complete=False)
        lows.append(stats.min)
        highs.append(stats.max)
    return Footer(metadata, lows, highs, complete=True)


def footer(path: Path, column: str) -> Footer:
    """The parsed footer of the sorted file ``path`` (by ``column``), as it is now."""
    stat = path.stat()
    return _footer(str(path), column, (stat.st_ino, stat.st_mtime_ns, stat.st_size))


def groups_between(found: Footer, low: str, high: str) -> list[int]:
    """The row groups whose keys can fall in ``low`` .. ``high`` (both included)."""
    if not found.complete:
        return list(range(found.metadata.num_row_groups))
    first = bisect.bisect_left(found.highs, low)  # the groups before end below ``low``
    last = bisect.bisect_right(found.lows, high)  # the groups from here start above ``high``
    return list(range(first, last))


def read_groups(path: Path, found: Footer, groups: list[int], columns: Sequence[str] | None
                ) -> pl.DataFrame:
    """The chosen row groups' ``columns`` (all when None; no group: an empty frame)."""
    file = pq.ParquetFile(path, metadata=found.metadata)
    table = file.read_row_groups(sorted(set(groups)),
                                 columns=None if columns is None else list(columns))
    return pl.DataFrame(pl.from_arrow(table))


def _with(column: str, columns: Sequence[str] | None) -> list[str] | None:
    """``columns`` and the key ``column`` (read to filter on), each once; None is every one."""
    return None if columns is None else list(dict.fromkeys([column, *columns]))


def rows_with(path: Path, column: str, keys: Sequence[str],
              columns: Sequence[str] | None = None) -> pl.DataFrame:
    """The rows of ``path`` (sorted by ``column``) whose ``column`` is one of ``keys``, in
    the file's order (``columns`` of them, or all)."""
    found = footer(path, column)
    groups = [g for key in set(keys) for g in groups_between(found, key, key)]
    rows = read_groups(path, found, groups, _with(column, columns)).filter(
        pl.col(column).is_in(list(keys)))
    return rows if columns is None else rows.select(columns)


def rows_between(path: Path, column: str, low: str, high: str, columns: Sequence[str],
                 limit: int | None = None) -> pl.DataFrame:
    """The rows of ``path`` (sorted by ``column``) with ``low <= column < high``, in order; the
    first ``limit`` of them when given (row groups are read one after another until enough)."""
    found = footer(path, column)
    inside = (pl.col(column) >= low) & (pl.col(column) < high)
    groups = groups_between(found, low, high)
    read = _with(column, columns)
    if limit is None:
        return read_groups(path, found, groups, read).filter(inside).select(columns)
    parts, count = [read_groups(path, found, [], read)], 0
    for group in groups:
        part = read_groups(path, found, [group], read).filter(inside)
        parts.append(part)
        count += part.height
        if count >= limit:
            break
    return pl.concat(parts).head(limit).select(columns)
