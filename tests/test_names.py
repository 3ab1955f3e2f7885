"""The name index (storage/names.py): a search by id or name reads the sorted index, finds
exact ids first, ids and names by their start and names by a later word; a page's ids get their
names; the index is pruned by row groups, never the whole table."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pyarrow.parquet as pq
import pytest

from bodycensus.storage.names import NAME_INDEX, ROW_GROUP, names_of, search, write_name_index

BODIES = pl.DataFrame({
    "id": ["B1", "B12", "B2", "X9", "moon/3", "N1"],
    "name": ["Umwyn 875", "Umwyn 875 c", "Vezarell 1764 f", None, "Umwyn 875 c I", "b1 lookalike"],
    "label": ["red dwarf", "terrestrial world", "asteroid", "asteroid", "rocky moon", "comet"],
})


@pytest.fixture()
def folder(tmp_path: Path) -> Path:
    write_name_index(BODIES.lazy(), tmp_path)
    return tmp_path


def test_an_exact_id_comes_first_then_ids_and_names_that_start_with_it(folder: Path) -> None:
    found = search(folder, "b1", 10)
    assert found["id"].to_list() == ["B1", "B12", "N1"]  # exact id, id prefix, name prefix
    assert found["exact_id"].to_list() == [True, False, False]
    assert found["matched"].to_list() == ["id", "id", "name"]


def test_names_are_found_by_their_start_and_by_a_later_word_in_any_case(folder: Path) -> None:
    assert search(folder, "UMWYN 875 C", 10)["id"].to_list() == ["B12", "moon/3"]
    by_word = search(folder, "875 c", 10)
    assert by_word["id"].to_list() == ["B12", "moon/3"]
    assert set(by_word["matched"]) == {"word"}
    assert search(folder, "zzz", 10).height == 0 and search(folder, "  ", 10).height == 0


def test_each_body_is_listed_once_and_the_limit_holds(folder: Path) -> None:
    found = search(folder, "umwyn", 2)
    assert found.height == 2 and found["id"].n_unique() == 2


def test_a_pages_ids_get_their_names(folder: Path) -> None:
    assert names_of(folder, ["B12", "X9", "nope", "moon/3"]) == {
        "B12": "Umwyn 875 c", "moon/3": "Umwyn 875 c I"}
    assert names_of(folder, []) == {}


def test_the_index_is_sorted_in_small_row_groups(tmp_path: Path) -> None:
    """Sorted keys in row groups with statistics: what lets a prefix read one or two groups."""
    many = pl.DataFrame({"id": [f"B{i:06d}" for i in range(3 * ROW_GROUP)],
                         "name": [f"Star {i}" for i in range(3 * ROW_GROUP)]})
    write_name_index(many.lazy(), tmp_path)
    meta = pq.ParquetFile(tmp_path / NAME_INDEX).metadata
    assert meta.num_row_groups > 3
    keys = pl.read_parquet(tmp_path / NAME_INDEX)["key"]
    assert keys.is_sorted()
    key_column = next(i for i in range(meta.num_columns)
                      if meta.row_group(0).column(i).path_in_schema == "key")
    stats = meta.row_group(0).column(key_column).statistics
    assert stats is not None and stats.has_min_max
    assert search(tmp_path, "b000123", 5)["id"].to_list()[:1] == ["B000123"]


def test_an_index_written_bucket_by_bucket_equals_one_sorted_at_once(tmp_path: Path) -> None:
    """Bounded memory: keys cut by key range into buckets, spilled a batch of bodies at a time
    and sorted a bucket at a time give the same file as one sort of every key."""
    count = 3000  # ids in file order, names shuffled: buckets must come from quantiles
    many = pl.DataFrame({"id": [f"B{i:05d}" for i in range(count)],
                         "name": [f"{w} {i * 7919 % count}" for i, w in
                                  zip(range(count), ["Aldra", "Umwyn", "Vezarell c"] * 1000,
                                      strict=True)] })
    at_once, bucketed = tmp_path / "at_once", tmp_path / "bucketed"
    at_once.mkdir(), bucketed.mkdir()
    write_name_index(many.lazy(), at_once)
    write_name_index(many.lazy(), bucketed, bucket_keys=1500, batch=700)
    whole = pl.read_parquet(at_once / NAME_INDEX)
    assert whole.height == 3000 * 2 + 3000 + 1000  # ids, names, later words ("c" and a number)
    assert pl.read_parquet(bucketed / NAME_INDEX).equals(whole)
    assert pq.ParquetFile(bucketed / NAME_INDEX).metadata.num_row_groups >= 5  # one per bucket
    assert sorted(p.name for p in bucketed.iterdir()) == [NAME_INDEX]  # no scratch left
    for text in ("b0012", "umwyn 1", "c 29", "vezarell c 2999"):
        assert search(bucketed, text, 30).equals(search(at_once, text, 30))
    assert names_of(bucketed, ["B00007", "B02999"]) == names_of(at_once, ["B00007", "B02999"])
