"""Sorting a table one key range at a time (storage/sorted_spill.py): bounds that cut sorted
and shuffled keys evenly, buckets that come back in key order, and one file appended range by
range that is either whole and in place or absent."""

from __future__ import annotations

import random
from pathlib import Path

import polars as pl
import pyarrow.parquet as pq
import pytest

from bodycensus.storage.sorted_spill import AppendingWriter, RangeSpill, range_bounds

KEYS = [f"k{i:05d}" for i in range(10_000)]


@pytest.mark.parametrize("shuffled", [False, True], ids=["sorted", "shuffled"])
def test_bounds_cut_the_keys_into_even_buckets(shuffled: bool) -> None:
    keys = list(KEYS)
    if shuffled:
        random.Random(5).shuffle(keys)
    sample = pl.Series(keys[::64])
    bounds = range_bounds(sample, len(keys), 2_000)
    assert bounds.len() == 4 and bounds.is_sorted() and bounds.dtype == pl.String
    sizes = bounds.search_sorted(pl.Series(KEYS), side="right").value_counts()
    assert sizes["count"].min() > 1_700 and sizes["count"].max() < 2_300
    assert range_bounds(sample, len(keys), 20_000).is_empty()
    assert range_bounds(pl.Series([], dtype=pl.String), 10, 1).is_empty()


def test_numbers_are_cut_as_numbers() -> None:
    rows = pl.Series(range(100_000), dtype=pl.Int64)  # as text, 9 would sort after 10,000
    bounds = range_bounds(rows.gather_every(64), rows.len(), 25_000)
    assert bounds.dtype == pl.Int64 and bounds.len() == 3
    sizes = bounds.search_sorted(rows, side="right").value_counts()["count"]
    assert sizes.min() > 24_000 and sizes.max() < 26_000


def test_buckets_come_back_in_key_order_and_the_scratch_goes(tmp_path: Path) -> None:
    rows = pl.DataFrame({"key": list(reversed(KEYS)), "n": range(len(KEYS))})
    with RangeSpill(tmp_path / "out.parquet", "key", pl.Series(["k02500", "k05000"])) as spill:
        for start in range(0, rows.height, 3_000):
            spill.add(rows.slice(start, 3_000))
        spill.put_aside(rows.head(2))
        buckets = list(spill.buckets())
        aside = list(spill.aside())
        assert spill.folder.is_dir()
    assert [b.height for b in buckets] == [2_500, 2_500, 5_000]
    assert pl.concat(buckets).sort("key")["key"].to_list() == KEYS
    assert buckets[0]["key"].max() < "k02500" <= buckets[1]["key"].min()
    assert buckets[2]["n"].is_sorted()  # pieces in the order they were added
    assert [a.rows() for a in aside] == [rows.head(2).rows()]
    assert list(tmp_path.iterdir()) == []


def test_an_appended_file_is_whole_typed_and_keeps_its_metadata(tmp_path: Path) -> None:
    schema = pl.Schema({"key": pl.String, "n": pl.Int64})
    dest = tmp_path / "out.parquet"
    with AppendingWriter(dest, schema, 100, {"made.by": "test"}) as out:
        out.write(pl.DataFrame({"key": ["a", "b"], "n": [1, 2]}))
        out.write(pl.DataFrame({"key": [], "n": []}, schema=schema))
        out.write(pl.DataFrame({"key": ["c"] * 150, "n": [3] * 150}))
        assert not dest.exists()
    meta = pq.ParquetFile(dest).metadata
    assert [meta.row_group(g).num_rows for g in range(meta.num_row_groups)] == [2, 100, 50]
    assert pl.read_parquet(dest).schema == schema and pl.read_parquet(dest).height == 152
    assert pl.read_parquet_metadata(dest)["made.by"] == "test"
    with AppendingWriter(tmp_path / "empty.parquet", schema, 100):
        pass
    assert pl.read_parquet(tmp_path / "empty.parquet").schema == schema


def test_a_failed_write_leaves_the_old_file_and_no_temporary(tmp_path: Path) -> None:
    dest = tmp_path / "out.parquet"
    pl.DataFrame({"key": ["old"], "n": [0]}).write_parquet(dest)
    with pytest.raises(RuntimeError), AppendingWriter(
            dest, pl.Schema({"key": pl.String, "n": pl.Int64}), 100) as out:
        out.write(pl.DataFrame({"key": ["new"], "n": [1]}))
        raise RuntimeError("disk gone")
    assert pl.read_parquet(dest)["key"].to_list() == ["old"]
    assert [p.name for p in tmp_path.iterdir()] == ["out.parquet"]
