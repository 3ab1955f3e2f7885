"""Shared pieces of the dataset and Dask tests: splitting a catalogue into files by system or
by rows, and the columns two runs must agree on."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import polars as pl
from polars.testing import assert_frame_equal

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


# Two runs split differently may differ in the last bit of a value: polars divides a column by
# a constant as a product with its reciprocal, except in a frame of one row, where it divides
# (10.999992220514683 against ...681 M_jup for one brown dwarf alone in its partition). A few
# units in the last place, never more: 1e-13 relative.
ULP_TOLERANCE = 1e-13


def assert_same_findings(got: pl.DataFrame, expected: pl.DataFrame) -> None:
    """The same findings row for row: body, rule and severity equal, value and limit equal to
    within ``ULP_TOLERANCE`` (nulls where the other has nulls)."""
    left, right = findings_key(got), findings_key(expected)
    assert left.height == right.height
    assert_frame_equal(left.select(KEY[:3]), right.select(KEY[:3]))
    assert_frame_equal(left.select(KEY[3:]), right.select(KEY[3:]), check_exact=False,
                       rel_tol=ULP_TOLERANCE, abs_tol=0.0)


def _in_body_order(items: list[Any]) -> list[Any]:
    """A list of marked points sorted by body: ties in a figure's order (equal margins) follow
    the row numbers, which differ when a catalogue's files hold its rows in another order."""
    if items and all(isinstance(item, dict) and "body" in item for item in items):
        return sorted(items, key=lambda item: (str(item["body"]), str(item.get("rule"))))
    return items


def assert_same_aggregates(got: Any, expected: Any, where: str = "aggregates") -> None:
    """Equal aggregates: every count, label and key equal; floats within ``ULP_TOLERANCE``;
    a figure's marked points compared body by body."""
    if isinstance(expected, dict):
        assert isinstance(got, dict) and got.keys() == expected.keys(), where
        for key in expected:
            assert_same_aggregates(got[key], expected[key], f"{where}.{key}")
    elif isinstance(expected, list):
        assert isinstance(got, list) and len(got) == len(expected), where
        for number, (mine, theirs) in enumerate(zip(_in_body_order(got),
                                                    _in_body_order(expected), strict=True)):
            assert_same_aggregates(mine, theirs, f"{where}[{number}]")
    elif isinstance(expected, float) and isinstance(got, float):
        assert math.isclose(got, expected, rel_tol=ULP_TOLERANCE) or got == expected or (
            math.isnan(got) and math.isnan(expected)), f"{where}: {got!r} != {expected!r}"
    else:
        assert got == expected, f"{where}: {got!r} != {expected!r}"
