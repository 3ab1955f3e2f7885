"""A table too big to sort in memory written in order, one key range at a time: rows are cut
by ranges of a key into buckets spilled to a scratch folder, and each bucket, sorted alone,
is appended to one Parquet file (row groups with statistics) after the buckets before it.

Hand-written because polars sorts a whole frame in memory (a streaming sink did not bound it:
the name index of 10M bodies was heading for ~6 GiB) and has no writer that appends row groups
to a file; pyarrow's ``ParquetWriter`` appends them. The ranges' bounds are quantiles of a
sample of the keys, so a table already sorted by its key is cut as evenly as a shuffled one.
"""

from __future__ import annotations

import os
import secrets
import shutil
from collections.abc import Iterator
from pathlib import Path
from types import TracebackType
from typing import Literal

import polars as pl
import pyarrow.parquet as pq

from bodycensus.durable import fsync_path

SAMPLE = 64  # every SAMPLE-th row's key places the buckets' bounds
SCRATCH_COMPRESSION: Literal["lz4"] = "lz4"  # spilled pieces are read once: fast over small


def range_bounds(sample: pl.Series, rows: int, bucket_rows: int) -> pl.Series:
    """Keys that cut ``rows`` rows whose keys look like ``sample`` into buckets of about
    ``bucket_rows`` rows each, ascending, of the sample's type (none when they fit one)."""
    buckets = -(-rows // bucket_rows)
    keys = sample.drop_nulls().sort()
    if buckets <= 1 or keys.len() == 0:
        return keys.clear()
    return keys.gather([i * keys.len() // buckets for i in range(1, buckets)]).unique().sort()


class RangeSpill:
    """A scratch folder of rows cut by ranges of ``column`` (bucket ``i`` holds the keys from
    ``bounds[i - 1]`` up to, not including, ``bounds[i]``; ``range_bounds`` gives them);
    removed on leaving the block."""

    def __init__(self, beside: Path, column: str, bounds: pl.Series) -> None:
        self.folder = beside.with_name(f"{beside.name}.{secrets.token_hex(4)}.spill")
        self.column = column
        self.bounds = bounds
        self._pieces = 0

    def __enter__(self) -> RangeSpill:
        self.folder.mkdir(parents=True)
        return self

    def __exit__(self, kind: type[BaseException] | None, error: BaseException | None,
                 trace: TracebackType | None) -> None:
        shutil.rmtree(self.folder, ignore_errors=True)

    def add(self, rows: pl.DataFrame) -> None:
        """Spill ``rows`` (any order) into their buckets; a bucket keeps the order of adds."""
        bucket = self.bounds.search_sorted(rows[self.column], side="right")
        for (number,), piece in rows.with_columns(_bucket=bucket).partition_by(
                "_bucket", as_dict=True).items():
            into = self.folder / f"{number:05d}"
            into.mkdir(exist_ok=True)
            piece.drop("_bucket").write_parquet(into / f"{self._pieces:08d}.parquet",
                                                compression=SCRATCH_COMPRESSION)
        self._pieces += 1

    def buckets(self) -> Iterator[pl.DataFrame]:
        """Each non-empty bucket's rows in key-range order (unsorted within; pieces in the
        order added), its scratch files deleted once read."""
        for number in range(self.bounds.len() + 1):
            into = self.folder / f"{number:05d}"
            if into.is_dir():
                rows = pl.read_parquet(sorted(into.glob("*.parquet")))
                shutil.rmtree(into)
                yield rows

    def put_aside(self, rows: pl.DataFrame) -> None:
        """Keep ``rows`` on disk to be written after others (``aside`` gives them back)."""
        into = self.folder / "aside"
        into.mkdir(exist_ok=True)
        rows.write_parquet(into / f"{self._pieces:08d}.parquet", compression=SCRATCH_COMPRESSION)
        self._pieces += 1

    def aside(self) -> Iterator[pl.DataFrame]:
        """The rows put aside, piece by piece in the order they were put, each deleted once
        read."""
        for path in sorted((self.folder / "aside").glob("*.parquet")):
            rows = pl.read_parquet(path)
            path.unlink()
            yield rows


class AppendingWriter:
    """One Parquet file written frame after frame, in row groups of ``row_group_size`` with
    statistics (and ``metadata``), under a temporary name fsynced and renamed into place when
    the block ends without an error; ``schema`` types an empty file and every frame."""

    def __init__(self, dest: Path, schema: pl.Schema, row_group_size: int,
                 metadata: dict[str, str] | None = None) -> None:
        self.dest = dest
        self.tmp = dest.with_name(f"{dest.name}.{secrets.token_hex(4)}.tmp")
        empty = pl.DataFrame(schema=schema).to_arrow()
        self.schema = empty.schema.with_metadata(metadata or {})
        self.row_group_size = row_group_size
        self._writer = pq.ParquetWriter(self.tmp, self.schema, write_statistics=True,
                                        compression="zstd")  # as polars writes

    def __enter__(self) -> AppendingWriter:
        return self

    def write(self, frame: pl.DataFrame) -> None:
        """Append ``frame``'s rows after those written before."""
        if frame.height:
            table = frame.to_arrow().cast(self.schema)
            self._writer.write_table(table, row_group_size=self.row_group_size)

    def __exit__(self, kind: type[BaseException] | None, error: BaseException | None,
                 trace: TracebackType | None) -> None:
        self._writer.close()
        if error is not None:
            self.tmp.unlink(missing_ok=True)
            return
        fsync_path(self.tmp)
        os.replace(self.tmp, self.dest)
