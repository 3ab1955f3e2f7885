"""Datasets (input/dataset.py): one catalogue as a file, a folder of files or a glob, checked by
the local engine as the single file it was split from."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest
from dask_support import KEY, split_by_rows

from bodycensus.engines.local import check_dataset, check_file
from bodycensus.input.dataset import dataset_files, merge_reports
from bodycensus.input.ingest import IngestError

CSV = ("id,type,orbits,system,mass (earth_mass),radius_km,a (au)\n"
       "sol,yellow dwarf star,,Sol,332946,695700,\n"
       "terra,terrestrial planet,sol,Sol,1,6371,1\n"
       "dup,terrestrial planet,sol,Sol,1,6371,1.5\n"
       "dup,terrestrial planet,sol,Sol,1,6371,2\n")


@pytest.fixture()
def catalogue(tmp_path: Path) -> Path:
    path = tmp_path / "tiny.csv"
    path.write_text(CSV)
    return path


def test_a_file_a_folder_and_a_glob(tmp_path: Path) -> None:
    for name in ("b.parquet", "a.parquet", "notes.md", "_metadata", ".part.parquet.crc"):
        (tmp_path / name).write_bytes(b"x")
    assert dataset_files(tmp_path / "a.parquet") == [tmp_path / "a.parquet"]
    assert dataset_files(tmp_path) == [tmp_path / "a.parquet", tmp_path / "b.parquet"]
    assert dataset_files(f"{tmp_path}/b*") == [tmp_path / "b.parquet"]


@pytest.mark.parametrize(("spec", "words"), [
    ("missing", "no such file or folder; check the path"),
    ("empty", "no catalogue files in this folder"),
    ("nothing-*.parquet", "no file matches this pattern"),
])
def test_no_files_is_one_line(tmp_path: Path, spec: str, words: str) -> None:
    (tmp_path / "empty").mkdir()
    with pytest.raises(IngestError, match=words):
        dataset_files(tmp_path / spec)


def test_files_with_other_columns_are_refused(tmp_path: Path, catalogue: Path) -> None:
    other = tmp_path / "other.csv"
    other.write_text(CSV.replace("radius_km", "radius_m"))
    folder = tmp_path / "dump"
    folder.mkdir()
    catalogue.rename(folder / "a.csv")
    other.rename(folder / "b.csv")
    with pytest.raises(IngestError, match="b.csv: its columns differ from a.csv's"):
        check_dataset(folder, tmp_path / "run")


def test_a_split_catalogue_gives_the_same_findings_rows_and_counts(tmp_path: Path,
                                                                   catalogue: Path) -> None:
    whole = check_file(catalogue, tmp_path / "whole")
    parts = split_by_rows(pl.read_csv(catalogue), tmp_path / "parts", files=2)
    split = check_dataset(parts, tmp_path / "split")
    assert split.findings.select(KEY).sort(KEY).equals(whole.findings.select(KEY).sort(KEY))
    assert "duplicate-id" in split.findings["rule"].to_list()  # the two dups sit in two files
    bodies = pl.read_parquet(split.bodies)
    assert sorted(bodies["_row"]) == [1, 2, 3, 4]  # rows numbered on across the files
    assert split.summary["rows"] == 4 and split.report is not None
    assert split.report.rows == 4
    assert not (tmp_path / "split" / "normalised").exists()


def test_reports_merge_their_unreadable_cells(tmp_path: Path, catalogue: Path) -> None:
    bad = tmp_path / "bad.csv"
    bad.write_text(CSV.replace("6371,1\n", "6371,one\n", 1))
    first = check_file(bad, tmp_path / "a").report
    assert first is not None and first.bad_cells == {"a (au)": 1}
    merged = merge_reports([bad, bad], [first, first])
    assert merged.bad_cells == {"a (au)": 2} and merged.rows == 2 * first.rows


BLOCK_DASK = """
import sys
sys.modules["dask"] = sys.modules["distributed"] = None  # as in a base install without Dask
from bodycensus.cli.main import main
sys.exit(main(sys.argv[1:]))
"""


@pytest.mark.parametrize(("engine", "code", "words"), [
    ("local", 0, ""),
    ("dask", 2, "bodycensus check: --engine dask needs Dask (dask.dataframe is not installed); "
                "pip install 'bodycensus[distributed]'"),
])
def test_the_base_install_checks_without_dask(catalogue: Path, engine: str, code: int,
                                              words: str) -> None:
    import subprocess
    import sys

    run = subprocess.run([sys.executable, "-c", BLOCK_DASK, "check", str(catalogue),
                          "--engine", engine, "--quiet"], capture_output=True, text=True,
                         check=False)
    assert run.returncode == code, run.stderr
    assert run.stderr.strip() == words


def test_numbering_a_part_twice_changes_nothing(tmp_path: Path, catalogue: Path) -> None:
    from bodycensus.input.dataset import shift_rows
    from bodycensus.input.ingest import ingest

    part = tmp_path / "part.parquet"
    ingest(catalogue, part)
    for _ in range(2):  # as when Dask retries the task after it had finished once
        shift_rows(part, 10)
        assert pl.read_parquet(part)["_row"].to_list() == [11, 12, 13, 14]


def test_a_run_folder_is_shown_by_the_store(tmp_path: Path, catalogue: Path) -> None:
    import json

    from bodycensus.cli.run_folder import write_run_folder
    from bodycensus.engines.local import CheckOptions
    from bodycensus.errors import NotFound
    from bodycensus.storage.store import Store

    run = tmp_path / "run"
    result = check_dataset(catalogue, run)
    manifest = write_run_folder(result, run, "tiny.csv", CheckOptions())
    written = json.loads((run / "manifest.json").read_text())
    assert written["id"] == manifest.id and written["status"] == "ready"
    assert written["rows"] == 4 and written["summary"]["findings"] == result.findings.height
    assert (run / "aggregates.json").is_file() and (run / "names.parquet").is_file()
    store = Store(tmp_path / "data")
    assert store.add_run(run).id == manifest.id
    assert [m.name for m in store.list()] == ["tiny.csv"]
    (tmp_path / "not-a-run").mkdir()
    with pytest.raises(NotFound, match="not a run folder"):
        store.add_run(tmp_path / "not-a-run")
