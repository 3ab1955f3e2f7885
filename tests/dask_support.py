"""Shared pieces of the dataset and Dask tests: splitting a catalogue into files by system or
by rows, and the columns two runs must agree on."""

from __future__ import annotations

from pathlib import Path

import polars as pl

KEY = ["body", "rule", "severity", "value", "limit"]  # a finding, as the issue compares them


def split_by_rows(catalogue: pl.DataFrame, folder: Path, files: int = 8) -> Path:
    """Write ``catalogue`` as ``files`` Parquet files of consecutive rows (systems cut apart)."""
    folder.mkdir(parents=True, exist_ok=True)
    size = -(-catalogue.height // files)
    for number in range(files):
        catalogue.slice(number * size, size).write_parquet(folder / f"part-{number}.parquet")
    return folder


def split_by_system(catalogue: pl.DataFrame, folder: Path, files: int = 8) -> Path:
    """Write ``catalogue`` as ``files`` Parquet files, each holding whole systems."""
    folder.mkdir(parents=True, exist_ok=True)
    bucket = pl.col("system").hash(seed=5) % files
    for number in range(files):
        catalogue.filter(bucket == number).write_parquet(folder / f"part-{number}.parquet")
    return folder


def findings_key(findings: pl.DataFrame) -> pl.DataFrame:
    """The findings as the issue compares them, in one order."""
    return findings.select(KEY).sort(KEY, nulls_last=True)
