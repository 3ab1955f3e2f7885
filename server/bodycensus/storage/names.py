"""The name index of a checked catalogue: every body's id and name, and each later word of its
name, lower-cased and sorted, so a search by id or name reads a few row groups, never the table.

``names.parquet`` holds (id, name, key, kind) sorted by key in small row
groups with statistics; a prefix search is a range on ``key`` that Parquet's row-group minima
and maxima prune; a look-up of a page's ids is an ``is_in`` on the id keys. Written once after a
run (``write_name_index``), or on first use for a catalogue checked before the index existed.
"""

from __future__ import annotations

import os
from pathlib import Path

import polars as pl

from bodycensus.durable import fsync_path

NAME_INDEX = "names.parquet"
ROW_GROUP = 4096  # keys per row group: a prefix search decodes one or two of them
MAX_KEY = 120  # characters of a key kept (longer names are found by their start)
MAX_WORDS = 4  # a name is also found from each of its 2nd to 4th words on
_COLUMNS = ("id", "name")
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


def write_name_index(bodies: pl.LazyFrame, folder: Path) -> Path:
    """Write ``names.parquet`` for ``bodies`` into ``folder`` (temporary file, fsync, rename)."""
    dest = folder / NAME_INDEX
    tmp = dest.with_name(dest.name + ".tmp")
    frame = _keys(bodies).sort("key").collect()
    frame.write_parquet(tmp, row_group_size=ROW_GROUP, statistics=True)
    fsync_path(tmp)
    os.replace(tmp, dest)
    return dest


def search(folder: Path, text: str, limit: int) -> pl.DataFrame:
    """Bodies whose id, name or a later word of the name starts with ``text`` (any case):
    exact ids first, then ids, names and words that start with it; one row per body."""
    prefix = text.strip().lower()[:MAX_KEY]
    if not prefix:
        return pl.DataFrame(schema={c: pl.String for c in _COLUMNS})
    found = (pl.scan_parquet(folder / NAME_INDEX)
             .filter((pl.col("key") >= prefix) & (pl.col("key") < prefix + "\U0010ffff"))
             .head(limit * 20).collect())
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
    found = (pl.scan_parquet(folder / NAME_INDEX)
             .filter(pl.col("key").is_in(keys) & (pl.col("kind") == _KINDS["id"])
                     & pl.col("id").is_in(ids) & pl.col("name").is_not_null())
             .select("id", "name").collect())
    return dict(zip(found["id"].to_list(), found["name"].to_list(), strict=True))


def has_index(folder: Path) -> bool:
    """Whether the catalogue in ``folder`` has its name index."""
    return (folder / NAME_INDEX).is_file()
