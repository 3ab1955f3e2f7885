"""A dataset: one catalogue given as a single file, a folder of files or a glob of them.

Big catalogues arrive as many Parquet files (one per writer or per system bucket). The local and
the Dask engine accept the same three forms: ``universe.parquet``, ``dump/`` (every catalogue file
directly inside it, sorted by name; names starting with ``.`` or ``_``, such as ``_metadata``, are
left out) and ``'dump/part-*.parquet'``. Each file is ingested on its
own with the same column mapping (the files must share their columns), and their reports merge.
"""

from __future__ import annotations

import glob
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path

import polars as pl

from bodycensus.input.formats import catalogue_suffix
from bodycensus.input.hosts import HostColumns
from bodycensus.input.ingest import IngestLimits, IngestReport, ingest
from bodycensus.input.readers import IngestError

_GLOB_CHARACTERS = frozenset("*?[")


def dataset_files(spec: str | Path) -> list[Path]:
    """The files of a dataset, sorted by name; a one-line IngestError when there are none."""
    text = str(spec)
    path = Path(text)
    if path.is_file():
        return [path]
    if path.is_dir():
        files = sorted(p for p in path.iterdir() if p.is_file() and p.name[0] not in "._"
                       and catalogue_suffix(p.name) is not None)
        if not files:
            raise IngestError(f"{path}: no catalogue files in this folder; give a file, a "
                              "folder of Parquet files or a glob such as 'dump/*.parquet'")
        return files
    if _GLOB_CHARACTERS & set(text):
        files = sorted(Path(p) for p in glob.glob(text) if Path(p).is_file())
        if not files:
            raise IngestError(f"{text}: no file matches this pattern; check the path")
        return files
    raise IngestError(f"{path}: no such file or folder; check the path")


def describe(files: Sequence[Path]) -> str:
    """A short name of the dataset for messages and manifests."""
    if len(files) == 1:
        return files[0].name
    return f"{files[0].parent.name or files[0].parent}/ ({len(files)} files)"


def merge_reports(files: Sequence[Path], reports: Sequence[IngestReport]) -> IngestReport:
    """One report for the whole dataset: rows and unreadable cells added up; an IngestError
    naming the first file whose columns differ from the first file's."""
    first = reports[0]
    for path, report in zip(files, reports, strict=True):
        if report.columns != first.columns:
            raise IngestError(f"{path.name}: its columns differ from {files[0].name}'s; every "
                              "file of a dataset needs the same columns")
    bad: dict[str, int] = {}
    for report in reports:
        for column, count in report.bad_cells.items():
            bad[column] = bad.get(column, 0) + count
    return replace(first, rows=sum(r.rows for r in reports), bad_cells=bad)


def row_offsets(reports: Sequence[IngestReport]) -> list[int]:
    """What to add to each file's 1-based row numbers so they run on across the dataset."""
    offsets, total = [], 0
    for report in reports:
        offsets.append(total)
        total += report.rows
    return offsets


def shift_rows(part: Path, offset: int) -> None:
    """Number the rows of one normalised part from ``offset`` + 1 on, so a dataset's rows run on
    from file to file (the Dask engine does it once every file's count is known). Doing it twice
    gives the same numbers, so a task Dask retries after a lost worker cannot shift twice."""
    if offset == 0:
        return  # ingest numbers each file from 1
    shifted = part.with_name(part.name + ".shifted")
    first = pl.col("_row").min()
    pl.scan_parquet(part).with_columns(pl.col("_row") - first + 1 + offset).sink_parquet(shifted)
    shifted.replace(part)


def ingest_dataset(files: Sequence[Path], folder: Path, *,
                   map_overrides: dict[str, str] | None = None,
                   unit_overrides: dict[str, str] | None = None,
                   limits: IngestLimits | None = None, hosts: HostColumns | None = None,
                   nulls: tuple[str, ...] = ()) -> tuple[list[Path], IngestReport]:
    """Ingest every file of a dataset into ``folder`` (``part-00000.parquet``, ...), one after
    the other, each with the same mapping, host columns and null sentinels; the normalised
    parts and the merged report. Host rows are built per file, so a host whose planets span
    files is listed once per file (a duplicate id)."""
    folder.mkdir(parents=True, exist_ok=True)
    parts, reports, offset = [], [], 0
    for number, source in enumerate(files):
        dest = folder / f"part-{number:05d}.parquet"
        reports.append(ingest(source, dest, map_overrides=map_overrides,
                              unit_overrides=unit_overrides, limits=limits or IngestLimits(),
                              hosts=hosts, nulls=nulls))
        shift_rows(dest, offset)
        offset += reports[-1].rows
        parts.append(dest)
    return parts, merge_reports(files, reports)
