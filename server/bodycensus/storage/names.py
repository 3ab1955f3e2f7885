"""The name index of a checked catalogue: every body's id and name, and each later word of its
name, lower-cased and sorted, so a search by id or name reads a few row groups, never the table.

``names.parquet`` holds (id, name, key, kind) sorted by key in small row
groups with statistics; a prefix search is a range on ``key`` that Parquet's row-group minima
and maxima prune; a look-up of a page's ids is an ``is_in`` on the id keys. Written once after a
run (``write_name_index``, in bounded memory: one bucket of keys sorted at a time), or on first
use for a catalogue checked before the index existed.
"""

from __future__ import annotations

from pathlib import Path

import polars as pl

from bodycensus.storage.sorted_index import rows_between, rows_with
from bodycensus.storage.sorted_spill import SAMPLE, AppendingWriter, RangeSpill, range_bounds

NAME_INDEX = "names.parquet"
ROW_GROUP = 4096  # keys per row group: a prefix search decodes one or two of them
BUCKET_KEYS = 1_000_000  # keys sorted in memory at a time while writing the index
BATCH = 250_000  # bodies turned into keys at a time (about four keys each)
MAX_KEY = 120  # characters of a key kept (longer names are found by their start)
MAX_WORDS = 4  # a name is also found from each of its 2nd to 4th words on
_COLUMNS = ("id", "name")
_INDEX_COLUMNS = ("id", "name", "key", "kind")  # the index's columns, in its order
_KINDS = {"id": 0, "name": 1, "word": 2}  # how a key matched, best first


def _keys(bodies: pl.LazyFrame) -> pl.LazyFrame:
    """One row per key: the id, the whole name, and the name from each later word on."""
    have = bodies.collect_schema().names()
    cols = [pl.col(c) if c in have else pl.lit(None, pl.String).alias(c) for c in _COLUMNS]
    base = bodies.select(cols).filter(pl.col("id").is_not_null())
    by_id = base.with_columns(key=pl.col("id").str.to_lowercase(), kind=pl.lit(_KINDS["id"]))
    named = base.filter(pl.col("name").is_not_null())
    by_name = named.with_columns(key=pl.col("name").str.to_lowercase(),
                                 kind=pl.lit(_KINDS["name"]))
    split = named.with_columns(words=pl.col("name").str.to_lowercase().str.split(" "))
    words = [split.filter(pl.col("words").list.len() > i)
             .select(*_COLUMNS, key=pl.col("words").list.slice(i).list.join(" "),
                     kind=pl.lit(_KINDS["word"])) for i in range(1, MAX_WORDS)]
    return pl.concat([by_id, by_name, *words], how="vertical_relaxed").with_columns(
        pl.col("key").str.slice(0, MAX_KEY), pl.col("kind").cast(pl.Int8))


def write_name_index(bodies: pl.LazyFrame, folder: Path, bucket_keys: int = BUCKET_KEYS,
                     batch: int = BATCH) -> Path:
    """Write ``names.parquet`` for ``bodies`` into ``folder`` in bounded memory (temporary
    file, fsync, rename): the keys of ``batch`` bodies at a time are spilled by key range into
    buckets of about ``bucket_keys``, and each bucket, sorted alone, is appended to the file."""
    keys = _keys(bodies)
    sample = _keys(bodies.gather_every(SAMPLE)).select("key").collect()["key"]
    bounds = range_bounds(sample, sample.len() * SAMPLE, bucket_keys)
    with AppendingWriter(folder / NAME_INDEX, keys.collect_schema(), ROW_GROUP) as out:
        if bounds.is_empty():
            out.write(_sorted(keys.collect()))
            return out.dest
        have = [c for c in _COLUMNS if c in bodies.collect_schema()]
        with RangeSpill(out.dest, "key", bounds) as spill:
            for chunk in bodies.select(have).collect_batches(chunk_size=batch):
                spill.add(_keys(chunk.lazy()).collect())
            for bucket in spill.buckets():
                out.write(_sorted(bucket))
    return out.dest


def _sorted(keys: pl.DataFrame) -> pl.DataFrame:
    """The index's rows in its order (by key; ties in one order whatever the bucketing)."""
    return keys.sort("key", "kind", "id", "name", nulls_last=True)


def search(folder: Path, text: str, limit: int) -> pl.DataFrame:
    """Bodies whose id, name or a later word of the name starts with ``text`` (any case):
    exact ids first, then ids, names and words that start with it; one row per body."""
    prefix = text.strip().lower()[:MAX_KEY]
    if not prefix:
        return pl.DataFrame(schema={c: pl.String for c in _COLUMNS})
    found = rows_between(folder / NAME_INDEX, "key", prefix, prefix + "\U0010ffff",
                         _INDEX_COLUMNS, limit=limit * 20)
    exact = (found["key"] == prefix) & (found["kind"] == _KINDS["id"])
    return (found.with_columns(exact=~exact).sort("exact", "kind", "key", "id")
            .unique("id", keep="first", maintain_order=True).head(limit)
            .select(*_COLUMNS, (~pl.col("exact")).alias("exact_id"),
                    pl.col("kind").replace_strict({v: k for k, v in _KINDS.items()},
                                                  return_dtype=pl.String).alias("matched")))


def names_of(folder: Path, ids: list[str]) -> dict[str, str]:
    """The name of each of ``ids`` that has one (a look-up in the index, not a scan)."""
    if not ids:
        return {}
    keys = sorted({i.lower()[:MAX_KEY] for i in ids})
    found = (rows_with(folder / NAME_INDEX, "key", keys, _INDEX_COLUMNS)
             .filter((pl.col("kind") == _KINDS["id"]) & pl.col("id").is_in(ids)
                     & pl.col("name").is_not_null()).select("id", "name"))
    return dict(zip(found["id"].to_list(), found["name"].to_list(), strict=True))


def has_index(folder: Path) -> bool:
    """Whether the catalogue in ``folder`` has its name index."""
    return (folder / NAME_INDEX).is_file()
