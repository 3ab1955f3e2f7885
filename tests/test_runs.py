"""The run files of a checked catalogue (storage/runs.py), in both layouts the engine writes."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pyarrow.parquet as pq
import pytest

from bodycensus.dashboard.screens.queries import body_detail
from bodycensus.engines.local import CheckOptions, check_file
from bodycensus.errors import NotFound
from bodycensus.storage.runs import (
    BODY_INDEX,
    BODY_ROW_GROUP,
    FEW_KEYS,
    FINDINGS_BY,
    findings_of,
    is_run,
    read_artefacts,
    scan_bodies,
    scan_bodies_around,
    scan_findings,
    write_bodies_file,
    write_body_index,
)

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "varrow_shoals.csv"


def _run(folder: Path, partitioned: bool) -> Path:
    folder.mkdir()
    bodies = pl.DataFrame({"id": ["a", "b", "c"], "label": ["x", "x", "y"]})
    if partitioned:
        (folder / "bodies").mkdir()
        bodies.head(2).write_parquet(folder / "bodies" / "part-00000.parquet")
        bodies.tail(1).write_parquet(folder / "bodies" / "part-00001.parquet")
    else:
        bodies.write_parquet(folder / "bodies.parquet")
    pl.DataFrame({"body": ["a"], "rule": ["r"]}).write_parquet(folder / "findings.parquet")
    pl.DataFrame({"kind": ["gap"]}).write_parquet(folder / "artefacts.parquet")
    return folder


@pytest.mark.parametrize("partitioned", [False, True], ids=["one-file", "partitions"])
def test_both_layouts_read_the_same(tmp_path: Path, partitioned: bool) -> None:
    run = _run(tmp_path / "run", partitioned)
    assert is_run(run)
    assert sorted(scan_bodies(run).collect()["id"]) == ["a", "b", "c"]
    assert scan_findings(run).collect().height == 1
    assert read_artefacts(run)["kind"].to_list() == ["gap"]


def test_a_folder_without_a_run_is_said_so(tmp_path: Path) -> None:
    assert not is_run(tmp_path) and not is_run(tmp_path / "missing")
    with pytest.raises(NotFound, match="holds no bodies"):
        scan_bodies(tmp_path)


def test_a_bodies_file_is_written_in_small_row_groups_with_statistics(tmp_path: Path) -> None:
    rows = 2 * BODY_ROW_GROUP + 5
    bodies = pl.DataFrame({"id": [f"b{i:06d}" for i in range(rows)],
                           "mass": [float(i) for i in range(rows)]})
    for frame, name in ((bodies, "eager.parquet"), (bodies.lazy(), "lazy.parquet")):
        dest = write_bodies_file(frame, tmp_path / name)
        meta = pq.ParquetFile(dest).metadata
        assert [meta.row_group(g).num_rows for g in range(meta.num_row_groups)] == [
            BODY_ROW_GROUP, BODY_ROW_GROUP, 5]
        last = meta.row_group(2).column(0).statistics
        assert (last.min, last.max) == (f"b{rows - 5:06d}", f"b{rows - 1:06d}")
        assert pl.read_parquet(dest).equals(bodies)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["eager.parquet", "lazy.parquet"]


def test_the_findings_of_bodies_and_systems_come_from_their_sorted_copies(tmp_path: Path
                                                                          ) -> None:
    run = tmp_path / "run"
    check_file(SAMPLE, run, CheckOptions(partition_rows=1_000))
    every = scan_findings(run).collect()
    assert every.height > 100
    for column in ("body", "system"):
        copy = pl.read_parquet(run / FINDINGS_BY[column])
        assert copy[column].drop_nulls().is_sorted() and copy.height == every.height
        every_key = every[column].drop_nulls().unique().sort()
        keys = every_key.gather_every(3).head(FEW_KEYS - 1).to_list() + ["none"]
        expected = every.filter(pl.col(column).is_in(keys))
        (run / FINDINGS_BY[column]).rename(tmp_path / "kept")  # a run without it: a filter
        assert findings_of(run, column, keys).collect().equals(expected)
        (tmp_path / "kept").rename(run / FINDINGS_BY[column])
        found = findings_of(run, column, keys).collect()
        assert found.schema == expected.schema and found.height >= len(keys) - 1
        assert found.equals(expected.sort(column, maintain_order=True))  # list order by key
        many = every_key.to_list()  # more than a few: a filter of every finding, list order
        assert len(many) > FEW_KEYS
        assert findings_of(run, column, many).collect().equals(
            every.filter(pl.col(column).is_in(many)))


def test_the_body_index_reads_only_the_partition_of_a_body(tmp_path: Path) -> None:
    run = _run(tmp_path / "run", partitioned=True)
    assert write_body_index(run) == run / BODY_INDEX
    index = pl.read_parquet(run / BODY_INDEX)
    assert index.rows() == [("a", "part-00000.parquet", None), ("b", "part-00000.parquet", None),
                            ("c", "part-00001.parquet", None)]  # these bodies have no system
    (run / "bodies" / "part-00000.parquet").unlink()  # a read of it would now fail
    assert scan_bodies_around(run, ["c"]).collect()["id"].to_list() == ["c"]
    assert scan_bodies_around(run, ["nobody"]).collect().height == 0
    assert write_body_index(_run(tmp_path / "whole", partitioned=False)) is None


def test_a_body_page_of_a_partitioned_run_needs_only_its_partition(tmp_path: Path) -> None:
    # The sample in partitions of about 1,000 bodies: a moon's page (its planet, siblings and
    # their findings) is whole when every other partition file is gone.
    run = tmp_path / "run"
    check_file(SAMPLE, run, CheckOptions(partition_rows=1_000))
    bodies = scan_bodies(run).select("id", "parent").collect()
    moon = bodies.filter(pl.col("parent").is_in(bodies.filter(pl.col("parent").is_not_null())
                                                ["parent"].implode())).row(0, named=True)
    before = body_detail(run, moon["id"], None)
    write_body_index(run)
    keep = pl.read_parquet(run / BODY_INDEX).filter(pl.col("id") == moon["id"])["part"][0]
    others = [p for p in (run / "bodies").glob("*.parquet") if p.name != keep]
    assert len(others) >= 10
    for part in others:
        part.unlink()
    after = body_detail(run, moon["id"], None)
    assert after == before and after["system"]["parent"] is not None
