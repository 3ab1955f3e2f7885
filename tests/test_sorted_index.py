"""Look-ups in a file sorted by one text column (storage/sorted_index.py): the same rows a
filter of the whole file gives, only the row groups that can hold the keys chosen, a limit read
group after group, and a file written again read again."""

from __future__ import annotations

import os
from pathlib import Path

import polars as pl
import pytest

from bodycensus.storage.sorted_index import (
    footer,
    groups_between,
    rows_between,
    rows_with,
)

KEYS = [f"k{i:05d}" for i in range(5_000)]


@pytest.fixture()
def index(tmp_path: Path) -> Path:
    path = tmp_path / "index.parquet"
    pl.DataFrame({"key": KEYS, "n": range(len(KEYS))}).write_parquet(
        path, row_group_size=100, statistics=True)
    return path


def test_keys_are_found_as_a_filter_of_the_whole_file_finds_them(index: Path) -> None:
    asked = ["k00007", "k04999", "k02500", "nothing", "k00007"]
    whole = pl.read_parquet(index)
    assert rows_with(index, "key", asked, ["key", "n"]).equals(
        whole.filter(pl.col("key").is_in(asked)))
    assert rows_with(index, "key", ["nothing"], ["key"]).height == 0
    assert rows_between(index, "key", "k012", "k013", ["n"]).columns == ["n"]
    assert rows_between(index, "key", "k012", "k013", ["key", "n"])["n"].to_list() == list(
        range(1_200, 1_300))


def test_only_the_row_groups_that_can_hold_a_key_are_chosen(index: Path) -> None:
    found = footer(index, "key")
    assert found.complete and len(found.lows) == 50
    assert groups_between(found, "k00150", "k00150") == [1]
    assert groups_between(found, "k00199", "k00201") == [1, 2]
    assert groups_between(found, "a", "b") == [] and groups_between(found, "z", "zz") == []


def test_groups_of_blank_keys_at_the_end_hold_no_key(tmp_path: Path) -> None:
    path = tmp_path / "blanks.parquet"
    keys = [*KEYS[:250], *[None] * 250]  # blanks sorted last: groups 3 and 4 hold none
    pl.DataFrame({"key": keys}).write_parquet(path, row_group_size=100, statistics=True)
    found = footer(path, "key")
    assert found.complete and found.lows[-2:] == found.highs[-2:] == ["k00249"] * 2
    assert groups_between(found, "k00150", "k00150") == [1]
    assert groups_between(found, "k00300", "k00300") == []
    assert rows_with(path, "key", ["k00249"])["key"].to_list() == ["k00249"]


def test_a_limit_reads_group_after_group_in_order(index: Path) -> None:
    first = rows_between(index, "key", "k0", "k1", ["key"], limit=250)
    assert first["key"].to_list() == KEYS[:250]
    assert rows_between(index, "key", "k049", "k05", ["key"], limit=500)["key"].to_list() == \
        KEYS[4_900:]


def test_a_file_written_again_is_read_again(index: Path) -> None:
    assert rows_with(index, "key", ["k00001"], ["key", "n"])["n"].to_list() == [1]
    replacement = index.with_name("new.parquet")
    pl.DataFrame({"key": ["k00001"], "n": [42]}).write_parquet(replacement)
    os.replace(replacement, index)
    assert rows_with(index, "key", ["k00001"], ["key", "n"])["n"].to_list() == [42]


def test_a_file_without_statistics_is_read_whole(tmp_path: Path) -> None:
    path = tmp_path / "bare.parquet"
    pl.DataFrame({"key": KEYS}).write_parquet(path, row_group_size=1_000, statistics=False)
    assert not footer(path, "key").complete
    assert rows_with(path, "key", ["k03000"], ["key"])["key"].to_list() == ["k03000"]
