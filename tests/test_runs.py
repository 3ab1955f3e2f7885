"""The run files of a checked catalogue (storage/runs.py), in both layouts the engine writes."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest

from bodycensus.errors import NotFound
from bodycensus.storage.runs import is_run, read_artefacts, scan_bodies, scan_findings


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
