"""The jobs ``bodycensus bench`` times in a child process of their own, besides
``bodycensus check``: the two plain polars floors and the pandas reference of the rules.

``python -m bodycensus.bench.jobs JOB CSV OUT`` runs one; the parent measures the process
(``bench.children``). Each job reads a demo catalogue (``bodycensus demo``) and writes OUT.
"""

from __future__ import annotations

import argparse
import importlib
from collections.abc import Callable, Sequence
from pathlib import Path

import polars as pl

# The demo catalogue's columns that hold words, not numbers (bodycensus.demo.COLUMNS).
TEXT_COLUMNS = ("id", "name", "type", "orbits", "system", "locked", "orbit_sense")
PANDAS_REFERENCE = "bodycensus.bench.pandas_reference"


def numeric_columns(csv: Path) -> list[str]:
    """The columns of a demo catalogue that hold numbers: every one but ``TEXT_COLUMNS``."""
    header = pl.read_csv(csv, n_rows=0, infer_schema=False).columns
    return [name for name in header if name not in TEXT_COLUMNS]


def floor_stream(csv: Path, out: Path) -> None:
    """Floor A: the plainest streaming ingest, every cell read as text, the numeric columns cast
    to Float64 (unreadable cells become null) and sunk to Parquet."""
    numeric = numeric_columns(csv)
    pl.scan_csv(csv, infer_schema=False).with_columns(
        pl.col(numeric).cast(pl.Float64, strict=False)).sink_parquet(out)


def floor_eager(csv: Path, out: Path) -> None:
    """Floor B: floor A's work done eagerly, the whole table in memory: ``read_csv`` then
    ``write_parquet``. Cells are read as text and cast as in floor A, because polars' own type
    inference (the first 100 rows) stops at the demo's first float in a column it took for
    integers ("invalid primitive value found during CSV parsing")."""
    numeric = numeric_columns(csv)
    pl.read_csv(csv, infer_schema=False).with_columns(
        pl.col(numeric).cast(pl.Float64, strict=False)).write_parquet(out)


def pandas_available() -> str | None:
    """Why the pandas reference cannot run here, or None when it can."""
    try:
        importlib.import_module(PANDAS_REFERENCE)
    except ModuleNotFoundError as missing:
        return (f"{missing.name} is not installed" if missing.name != PANDAS_REFERENCE else
                f"{PANDAS_REFERENCE} is not in this build (the pandas reference of the rules "
                "has not landed)")
    return None


def pandas_findings(csv: Path, out: Path) -> None:
    """The pandas reference of the rules (``pandas_reference.reference_findings``); its findings
    (body, rule, severity, value, limit) written to Parquet for the comparison with check's."""
    reference = importlib.import_module(PANDAS_REFERENCE)
    reference.reference_findings(csv).to_parquet(out, index=False)


JOBS: dict[str, Callable[[Path, Path], None]] = {
    "floor-stream": floor_stream, "floor-eager": floor_eager, "pandas": pandas_findings}


def main(argv: Sequence[str] | None = None) -> None:
    """Run one job by name."""
    parser = argparse.ArgumentParser(prog="python -m bodycensus.bench.jobs",
                                     description="Run one job of bodycensus bench.")
    parser.add_argument("job", choices=sorted(JOBS))
    parser.add_argument("csv", type=Path, help="a demo catalogue (bodycensus demo)")
    parser.add_argument("out", type=Path, help="the Parquet file to write")
    args = parser.parse_args(argv)
    JOBS[args.job](args.csv, args.out)


if __name__ == "__main__":
    main()
