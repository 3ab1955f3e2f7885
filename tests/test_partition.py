"""Same answers whatever the partitioning: a catalogue checked in many partitions of whole
systems gives the findings, coverage, artefacts, aggregates and derived bodies that one partition
holding the whole catalogue gives.

The one-partition run is the whole-table engine: every join and window sees every row. Against
main's engine (before partitions) the same was checked by hand on the sample, a 50,000 and a
1,000,000-body demo catalogue (``tests/same_answers.py``; figures in issue 10's note).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import polars as pl
import pytest
from catalogue_builder import normalised
from polars.testing import assert_frame_equal, assert_series_equal

from bodycensus.demo import write_demo
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.engines import local
from bodycensus.engines.local import JUDGE_ROWS, CheckOptions, check_file, check_table
from bodycensus.engines.partition import (
    PART,
    catalogue_facts,
    check_partition,
    judge,
    partition_numbers,
    with_partition,
)
from bodycensus.storage.runs import scan_bodies

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "varrow_shoals.csv"


# Floats agree to 12 significant digits, not to the last bit: the same row's pow or log can
# round differently with its place in a chunk (seen: relative 1e-16 in a few margins, also
# between two layouts of main's own engine).
RTOL = 1e-12


def _close(a: Any, b: Any, where: str = "") -> None:
    """Nested aggregates equal: integers and text exactly, floats to RTOL; lists of flagged
    bodies as sets (two bodies whose margins tie to RTOL may swap places)."""
    if isinstance(a, float) and isinstance(b, float):
        assert math.isclose(a, b, rel_tol=RTOL) or (math.isnan(a) and math.isnan(b)), where
    elif isinstance(a, dict) and isinstance(b, dict):
        assert a.keys() == b.keys(), where
        for key in a:
            _close(a[key], b[key], f"{where}/{key}")
    elif isinstance(a, list) and isinstance(b, list):
        assert len(a) == len(b), where
        if a and isinstance(a[0], dict) and "body" in a[0]:
            a, b = (sorted(x, key=lambda row: (row["body"], row.get("rule", ""))) for x in (a, b))
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _close(x, y, f"{where}[{i}]")
    else:
        assert a == b, where


def _same_run(one: Path, many: Path) -> None:
    """Findings (every column), coverage, artefacts, aggregates and bodies are equal (findings
    by rule and row: the file lists them by margin, whose last bits differ between layouts)."""
    by_row = ("rule", "_row")
    assert_frame_equal(pl.read_parquet(one / "findings.parquet").sort(by_row),
                       pl.read_parquet(many / "findings.parquet").sort(by_row),
                       rel_tol=RTOL, abs_tol=0.0)
    for name in ("coverage.parquet", "artefacts.parquet"):
        assert_frame_equal(pl.read_parquet(one / name), pl.read_parquet(many / name),
                           rel_tol=RTOL, abs_tol=0.0)
    _close(compute_aggregates(one), compute_aggregates(many))
    whole = scan_bodies(one).sort("_row").collect()
    split = scan_bodies(many).sort("_row").collect()
    assert_frame_equal(whole, split.select(whole.columns), rel_tol=RTOL, abs_tol=0.0)


# 20 partitions whose flagged rows are judged in many batches (``JUDGE_ROWS``), 6 in one
@pytest.mark.parametrize(("per_partition", "judge_rows"), [(1_000, 50), (3_333, JUDGE_ROWS)])
def test_the_sample_gives_the_same_answers_in_many_partitions(
        tmp_path: Path, per_partition: int, judge_rows: int,
        monkeypatch: pytest.MonkeyPatch) -> None:
    one = tmp_path / "one"
    many = tmp_path / "many"
    check_file(SAMPLE, one)
    monkeypatch.setattr(local, "JUDGE_ROWS", judge_rows)
    check_file(SAMPLE, many, CheckOptions(partition_rows=per_partition))
    assert len(list((one / "bodies").iterdir())) == 1
    assert len(list((many / "bodies").iterdir())) == -(-20_000 // per_partition)
    assert pl.read_parquet(one / "findings.parquet").height > 500
    _same_run(one, many)


def test_a_demo_catalogue_gives_the_same_answers_in_many_partitions(tmp_path: Path) -> None:
    catalogue, _ = write_demo(tmp_path / "demo.csv", n_bodies=50_000, seed=5)
    one, many = tmp_path / "one", tmp_path / "many"
    check_file(catalogue, one)
    check_file(catalogue, many, CheckOptions(partition_rows=4_000))
    assert len(list((many / "bodies").iterdir())) == 13
    _same_run(one, many)


# Systems that test the assignment: a moon whose planet comes later in the file, orphans that
# share a missing parent (siblings of each other), a loop, a duplicated id, a row without id.
TRICKY: list[dict[str, Any]] = [
    {"id": "m1", "parent": "p1", "label": "moon", "mass": 7e22, "radius": 1.7e6,
     "semi_major_axis": 3.8e8},
    {"id": "s1", "label": "yellow dwarf star", "mass": 2e30, "radius": 7e8},
    {"id": "p1", "parent": "s1", "label": "terrestrial planet", "mass": 6e24, "radius": 6.4e6,
     "semi_major_axis": 1.5e11},
    {"id": "p2", "parent": "s1", "label": "terrestrial planet", "mass": 6e24, "radius": 6.4e6,
     "semi_major_axis": 1.4e11},
    {"id": "o1", "parent": "ghost", "label": "terrestrial planet", "mass": 6e24,
     "radius": 6.4e6, "semi_major_axis": 1e11},
    {"id": "o2", "parent": "ghost", "label": "terrestrial planet", "mass": 6e24,
     "radius": 6.4e6, "semi_major_axis": 2e11},
    {"id": "l1", "parent": "l2", "label": "moon", "mass": 1e20, "radius": 1e5},
    {"id": "l2", "parent": "l1", "label": "moon", "mass": 1e20, "radius": 1e5},
    {"id": "l3", "parent": "l1", "label": "moon", "mass": 1e20, "radius": 1e5},
    {"id": "p1", "parent": "s1", "label": "terrestrial planet", "mass": 6e24, "radius": 6.4e6,
     "semi_major_axis": 1.5e11},
    {"parent": "s1", "label": "terrestrial planet", "mass": 6e24, "radius": 6.4e6,
     "semi_major_axis": 2e11},
    *[{"id": f"x{i}", "label": "yellow dwarf star", "mass": 2e30 * (1 + i / 50),
       "radius": 7e8} for i in range(40)],
]


def test_whole_systems_share_a_partition_whatever_the_file_order() -> None:
    table = normalised(TRICKY).lazy()
    facts, chains = catalogue_facts(table)
    part = with_partition(table, chains, 7).collect()
    of = {row["id"]: row[PART] for row in part.iter_rows(named=True) if row["id"]}
    assert of["m1"] == of["p1"] == of["p2"] == of["s1"]
    assert of["o1"] == of["o2"]
    assert of["l1"] == of["l2"] == of["l3"]
    assert part.filter(pl.col("id").is_null())[PART].item() == of["s1"]
    assert len(set(of.values())) > 2  # the 40 lone stars spread over the buckets
    assert sorted(facts.context.cycle_ids.to_list()) == ["l1", "l2", "l3"]
    assert facts.context.duplicate_ids.rows() == [("p1", 2)]


@pytest.mark.parametrize("partitions", [1, 7, 64])
def test_partition_numbers_are_the_buckets_of_with_partition_in_row_order(
        partitions: int) -> None:
    # the local engine looks the roots up by a binary search, the Dask engine joins them on
    table = normalised(TRICKY).lazy()
    _, chains = catalogue_facts(table)
    assert chains.hashed
    joined = with_partition(table, chains, partitions, ordered=True).collect()[PART]
    assert_series_equal(partition_numbers(table, chains, partitions), joined)


def test_check_partition_of_each_bucket_adds_up_to_the_whole(tmp_path: Path) -> None:
    table = normalised(TRICKY).lazy()
    facts, chains = catalogue_facts(table)
    part = with_partition(table, chains, 7).collect()
    results = [check_partition(part.filter(pl.col(PART) == p), facts)
               for p in part[PART].unique().to_list()]
    whole = check_table(table, tmp_path / "whole", CheckOptions(artefacts=False))
    key = ["rule", "_row"]
    found = judge([r.flagged for r in results], facts.rules()).collect().sort(key)
    assert {"duplicate-id", "orphan-parent", "parent-cycle"} <= set(found["rule"])
    assert_frame_equal(found, whole.findings.sort(key), rel_tol=RTOL, abs_tol=0.0)
    bodies = pl.concat([r.bodies for r in results]).sort("_row")
    assert_frame_equal(bodies, scan_bodies(tmp_path / "whole").sort("_row").collect(),
                       rel_tol=RTOL, abs_tol=0.0)
