"""Bodies files in system order (``storage.runs.write_bodies_file``): a body's page and a
system's page read only the row groups whose range of systems can hold the system, and answer
as a read of the whole partition does.

A 20,000-body demo catalogue is checked in partitions of about 1,000 bodies with bodies files in
row groups of 64 (so a partition has ~16 of them) and written as a run folder by ``check
--out``'s own code; the row groups read are recorded by wrapping the one function that reads
them. The same run with its bodies files rewritten without the order in their metadata (as an
older run) is read the old way: the whole partition.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable
from pathlib import Path
from typing import Any

import polars as pl
import pyarrow.parquet as pq
import pytest
from partitioned_run import demo_run_folder

from bodycensus.dashboard.screens import queries, triage
from bodycensus.storage import runs
from bodycensus.storage.runs import (
    BY_SYSTEM,
    KIN_IN_SYSTEM,
    SYSTEM_ORDER,
    bodies_files,
    scan_bodies,
    write_bodies_file,
)

BODIES = 20_000
GROUP = 64  # bodies per row group of the bodies files here


def _order(path: Path) -> str | None:
    """The order a bodies file's metadata names."""
    return pl.read_parquet_metadata(path).get(SYSTEM_ORDER)


def test_a_bodies_file_is_stored_in_system_order_blanks_last(tmp_path: Path) -> None:
    bodies = pl.DataFrame({"id": ["m1", "p2", "p1", "x", "m2", "s1"],
                           "parent": [None, None, None, None, "p2", "p1"],
                           "system": ["b", "b", "a", None, "b", "a"]})
    dest = write_bodies_file(bodies, tmp_path / "kin.parquet")
    assert pl.read_parquet(dest)["id"].to_list() == ["p1", "s1", "m1", "p2", "m2", "x"]
    assert _order(dest) == KIN_IN_SYSTEM
    # A moon whose system cell differs from its planet's: its kin are not all in its system.
    apart = bodies.with_columns(pl.when(pl.col("id") == "s1").then(pl.lit("c"))
                                .otherwise(pl.col("system")).alias("system"))
    assert _order(write_bodies_file(apart, tmp_path / "apart.parquet")) == BY_SYSTEM
    # Siblings of a parent this file does not hold, in two systems: the same.
    orphans = pl.DataFrame({"id": ["a", "b"], "parent": ["gone", "gone"], "system": ["s", "t"]})
    assert _order(write_bodies_file(orphans, tmp_path / "orphans.parquet")) == BY_SYSTEM
    assert _order(write_bodies_file(bodies.drop("system"), tmp_path / "none.parquet")) is None


@pytest.fixture(scope="module")
def folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A checked run folder of a demo catalogue in about 20 partitions of ~16 row groups."""
    return demo_run_folder(tmp_path_factory.mktemp("system_order"), BODIES,
                           {"BODY_ROW_GROUP": GROUP})


@pytest.fixture(scope="module")
def older(folder: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The same run with its bodies files rewritten without their order in the metadata."""
    copy = Path(shutil.copytree(folder, tmp_path_factory.mktemp("older") / "run"))
    for path in bodies_files(copy):
        pl.read_parquet(path).write_parquet(path, row_group_size=GROUP)
    return copy


Read = tuple[str, list[int]]


def _recording(patch: pytest.MonkeyPatch) -> list[Read]:
    """Every bodies-file read of chosen row groups from now on: (file name, groups)."""
    reads: list[Read] = []
    real: Callable[..., pl.DataFrame] = runs.read_groups

    def recorded(path: Path, found: Any, groups: list[int], columns: Any) -> pl.DataFrame:
        reads.append((path.name, sorted(groups)))
        return real(path, found, groups, columns)

    patch.setattr(runs, "read_groups", recorded)
    return reads


def _groups_holding(path: Path, system: str) -> set[int]:
    """The row groups of ``path`` that hold a body of ``system`` (read in full)."""
    meta = pq.ParquetFile(path).metadata
    out, start = set(), 0
    systems = pl.read_parquet(path, columns=["system"])["system"]
    for group in range(meta.num_row_groups):
        rows = meta.row_group(group).num_rows
        if (systems.slice(start, rows) == system).any():
            out.add(group)
        start += rows
    return out


def _moons(run: Path, count: int) -> pl.DataFrame:
    """``count`` bodies with a parent that has a parent (a moon: parent, siblings, kin)."""
    bodies = scan_bodies(run).select("id", "parent", "system").collect()
    planets = bodies.filter(pl.col("parent").is_not_null())["id"]
    return bodies.filter(pl.col("parent").is_in(planets.implode())).head(count)


def test_every_file_keeps_each_bodys_kin_in_its_system(folder: Path) -> None:
    files = bodies_files(folder)
    assert len(files) >= 10
    assert all(_order(path) == KIN_IN_SYSTEM for path in files)
    assert all(pq.ParquetFile(path).metadata.num_row_groups >= 10 for path in files)


def test_a_bodys_page_reads_the_row_groups_of_its_system_only(folder: Path, older: Path
                                                               ) -> None:
    moons = _moons(folder, 5)
    index = pl.read_parquet(folder / runs.BODY_INDEX)
    for moon in moons.iter_rows(named=True):
        with pytest.MonkeyPatch.context() as patch:
            reads = _recording(patch)
            detail = queries.body_detail(folder, moon["id"], None)
        part = index.filter(pl.col("id") == moon["id"])["part"][0]
        assert [name for name, _ in reads] == [part]  # one read, of its own partition
        holding = _groups_holding(folder / "bodies" / part, moon["system"])
        assert set(reads[0][1]) == holding and len(holding) <= 2
        assert detail["system"]["parent"] is not None
        assert detail == queries.body_detail(older, moon["id"], None)  # the whole partition


def test_a_systems_page_reads_the_row_groups_of_the_system_only(folder: Path, older: Path
                                                                 ) -> None:
    systems = _moons(folder, 5)["system"].to_list()
    index = pl.read_parquet(folder / "system_index.parquet")
    for system in systems:
        with pytest.MonkeyPatch.context() as patch:
            reads = _recording(patch)
            detail = queries.system_detail(folder, system)
            groups = triage.system_groups(folder, [], system)
        parts = index.filter(pl.col("system") == system)["part"].to_list()
        assert sorted({name for name, _ in reads}) == sorted(parts)
        for name, read in reads:
            assert set(read) == _groups_holding(folder / "bodies" / name, system)
        assert detail["total"] > 1
        assert detail == queries.system_detail(older, system)
        assert groups == triage.system_groups(older, [], system)
