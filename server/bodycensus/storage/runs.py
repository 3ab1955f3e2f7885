"""The engine's files of a checked catalogue folder as lazy frames, whichever layout wrote them.

A folder written by ``engines.local`` holds ``bodies.parquet`` (one file) or ``bodies/*.parquet``
(one file per partition), with ``findings.parquet`` and ``artefacts.parquet`` beside them. Triage
and comparison read only through these functions, so a change of layout is made here once.
"""

from __future__ import annotations

from pathlib import Path

import polars as pl

from bodycensus.errors import NotFound


def is_run(folder: Path) -> bool:
    """Whether ``folder`` holds a checked catalogue (``check --keep`` or the data directory)."""
    return folder.is_dir() and (folder / "findings.parquet").is_file()


def scan_bodies(folder: Path) -> pl.LazyFrame:
    """Every body of the run, lazily (the normalised fields, plus what the run stored beside)."""
    whole = folder / "bodies.parquet"
    if whole.is_file():
        return pl.scan_parquet(whole)
    parts = sorted((folder / "bodies").glob("*.parquet"))
    if not parts:
        raise NotFound(f"{folder} holds no bodies; check the catalogue again")
    return pl.scan_parquet(parts)


def scan_findings(folder: Path) -> pl.LazyFrame:
    """Every finding of the run, lazily."""
    return pl.scan_parquet(folder / "findings.parquet")


def read_artefacts(folder: Path) -> pl.DataFrame:
    """The run's distribution artefacts (a small table)."""
    return pl.read_parquet(folder / "artefacts.parquet")
