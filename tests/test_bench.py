"""The benchmark's parts: a child process measured from outside, the comparison of two sets of
findings, the floors' view of the demo's columns and the shared latency clients."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest

from bodycensus.bench import jobs
from bodycensus.bench.children import measure
from bodycensus.bench.latency import Tally, figures
from bodycensus.bench.peak import own_peak_mib
from bodycensus.bench.same_findings import compare_findings
from bodycensus.bench.table import LABEL, render
from bodycensus.demo import COLUMNS, write_demo


def _script(folder: Path, code: str) -> Path:
    path = folder / "child.py"
    path.write_text(code, encoding="utf-8")
    return path


GROW = "b = bytearray(300 * 2**20)\nb[::4096] = b'x' * len(b[::4096])\n"


def test_a_child_reports_its_own_peak_memory_not_its_parents(tmp_path: Path) -> None:
    ballast = bytearray(700 * 2**20)
    ballast[::4096] = b"x" * len(ballast[::4096])  # the parent resident at 700 MiB or more
    assert own_peak_mib() >= 700
    big = measure(_script(tmp_path, GROW))
    small = measure(_script(tmp_path, "pass\n"))
    assert big.ok and small.ok and big.peak_mib >= 300 > small.peak_mib, (big, small)
    del ballast


def test_a_failed_child_says_its_last_words(tmp_path: Path) -> None:
    failed = measure(_script(tmp_path, "raise SystemExit('no such catalogue')\n"))
    assert failed.exit_code == 1 and failed.error == "no such catalogue"
    assert 0 < failed.peak_mib < 300  # reported even though it failed


FINDINGS = pl.DataFrame({
    "body": ["a", "a", "b", "c"], "rule": ["r1", "r2", "r1", "r1"],
    "severity": ["suspect", "note", "impossible", "note"],
    "value": [1.0, 2.5e30, None, 3.0], "limit": [2.0, 1e30, 7.0, None]})


def test_the_same_findings_in_another_order_and_type_agree() -> None:
    theirs = FINDINGS.reverse().with_columns(pl.col("value") * (1 + 1e-12))
    agreement = compare_findings(FINDINGS, theirs)
    assert agreement.same and agreement.line() == "identical (4)"


@pytest.mark.parametrize("change", [
    pl.col("value").fill_null(5.0),                                    # a null became a number
    pl.when(pl.col("body") == "a").then(pl.col("limit") * (1 + 1e-7)).otherwise(pl.col("limit"))
    .alias("limit"),                                                   # past the tolerance
    pl.when(pl.col("body") == "c").then(pl.lit("suspect")).otherwise(pl.col("severity"))
    .alias("severity"),                                                # another severity
])
def test_a_changed_value_limit_or_severity_is_a_difference(change: pl.Expr) -> None:
    agreement = compare_findings(FINDINGS, FINDINGS.with_columns(change))
    assert not agreement.same and agreement.line().startswith("DIFFERENT (4 vs 4): ")


def test_a_missing_or_repeated_finding_is_named() -> None:
    theirs = pl.concat([FINDINGS.head(3), FINDINGS.head(1)])
    agreement = compare_findings(FINDINGS, theirs)
    assert agreement.differences == ["a r1 suspect: 1 vs 2", "c r1 note: 1 vs 0"]


def test_the_floors_cast_every_demo_column_but_the_words(tmp_path: Path) -> None:
    csv, _ = write_demo(tmp_path / "demo.csv", n_bodies=300, seed=3)
    assert set(jobs.TEXT_COLUMNS) < set(COLUMNS)
    assert jobs.numeric_columns(csv) == [c for c in COLUMNS if c not in jobs.TEXT_COLUMNS]
    for job in (jobs.floor_stream, jobs.floor_eager):
        job(csv, tmp_path / "out.parquet")
        written = pl.read_parquet(tmp_path / "out.parquet")
        assert written.height == 300 and written.columns == list(COLUMNS)
        assert written.schema["mass (earth_mass)"] == pl.Float64
        assert written.schema["id"] == pl.String


def test_latency_figures_count_answers_only_and_are_nearest_rank_in_milliseconds() -> None:
    tally = Tally(cap=4)
    assert tally.add("a", 0.010, None) and tally.add("b", 30.0, "ConnectError /x")
    assert tally.add("a", 0.030, None)
    assert not tally.add("b", 0.020, None)  # the cap
    assert tally.errors == ["b: ConnectError /x"]  # a failed request's time is no latency
    assert sorted(tally.every()) == [0.010, 0.020, 0.030]
    assert figures(tally.every()) == {"requests": 3, "median_ms": 20.0, "p95_ms": 30.0}


def test_a_child_past_the_memory_limit_is_killed_and_said_to_be(tmp_path: Path) -> None:
    grow = ("import time\nb = bytearray(600 * 2**20)\nb[::4096] = b'x' * len(b[::4096])\n"
            "time.sleep(30)\n")
    killed = measure(_script(tmp_path, grow), max_mib=200)
    assert killed.exit_code == -9 and killed.error.startswith("killed: resident memory ")
    assert killed.error.endswith("MiB passed 200 MiB") and killed.seconds < 25
    assert killed.peak_mib > 200  # the watchdog's last sample stands for its peak


def _row(seconds: float, mib: float, code: int = 0, error: str = "") -> dict[str, object]:
    return {"seconds": seconds, "peak_mib": mib, "exit_code": code, "error": error}


def test_the_table_bounds_the_ratios_of_a_process_killed_for_memory() -> None:
    killed = _row(50.0, 16_400.0, -9, "killed: resident memory 16,400 MiB passed 16,384 MiB")
    size = {"bodies": 10, "csv": "demo.csv", "csv_mib": 1.0, "same_findings": "not compared",
            "rows": {"floor_stream": _row(2.0, 100.0), "floor_eager": _row(4.0, 400.0),
                     "check": _row(5.0, 1_640.0), "pandas": killed}}
    results = {"head": {"when": "now", "cores": 2, "load": 1.0, "versions": "v"},
               "sizes": [size], "latency": {"not_run": "--no-latency"}}
    text = render(results)
    pandas_line = next(line for line in text.splitlines() if line.startswith("pandas"))
    assert pandas_line.split()[-2:] == [">50.00", ">16,400"]
    ratios = {line[:LABEL].strip(): line[LABEL:].split()[0] for line in text.splitlines()
              if line.startswith("  ") and line[LABEL:].strip()}
    assert ratios["check / floor A, time"] == "2.50"
    assert ratios["pandas / check, time"] == ">10.00"
    assert ratios["check / pandas, peak memory"] == "<0.10"
    assert "pandas reference of the rules at 10: killed: resident memory" in text
    assert "dashboard latency: not run (--no-latency)" in text
