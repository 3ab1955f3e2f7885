"""Decisions laid over findings (storage/triage.py): the most specific decision wins, the list
keeps its order, undecided findings filter out, and decisions that cover nothing are stale."""

from __future__ import annotations

import polars as pl
from polars.testing import assert_frame_equal

from bodycensus.storage.decisions import Decision
from bodycensus.storage.triage import DECISION_COLUMNS, stale, undecided, with_decisions

FINDINGS = pl.LazyFrame({"body": ["d", "a", "b", "c", "e"],
                         "rule": ["r1", "r1", "r1", "r2", "r1"],
                         "label": ["moon", "moon", "moon", "moon", "rock"]})
BODIES = pl.LazyFrame({"id": ["a", "b", "c", "d", "e"], "system": ["S1", "S2", "S1", "S1", "S1"]})
DECISIONS = [Decision("label", "r1", "moon", "accepted", "rigid moons"),
             Decision("system", "r1", "S1", "wontfix"),
             Decision("finding", "r1", "a", "confirmed", by="Ana")]


def test_the_most_specific_decision_wins_and_the_order_stays() -> None:
    out = with_decisions(FINDINGS, DECISIONS, lambda: BODIES).collect()
    assert out["body"].to_list() == ["d", "a", "b", "c", "e"]
    assert out["decision"].to_list() == ["wontfix", "confirmed", "accepted", None, "wontfix"]
    assert out["decision_scope"].to_list() == ["system", "finding", "label", None, "system"]
    assert out.row(1, named=True)["decided_by"] == "Ana"
    assert out.columns == [*FINDINGS.collect_schema(), *DECISION_COLUMNS]


def test_without_decisions_the_columns_are_there_and_empty() -> None:
    out = with_decisions(FINDINGS, []).collect()
    assert out.columns == [*FINDINGS.collect_schema(), *DECISION_COLUMNS]
    assert out["decision"].null_count() == out.height
    assert_frame_equal(undecided(with_decisions(FINDINGS, [])).collect(), out)


def test_undecided_keeps_only_what_no_decision_covers() -> None:
    left = undecided(with_decisions(FINDINGS, DECISIONS, lambda: BODIES)).collect()
    assert left["body"].to_list() == ["c"]


def test_system_decisions_read_no_bodies_when_there_are_none() -> None:
    def no_bodies() -> pl.LazyFrame:
        raise AssertionError("bodies read without a system decision")
    out = with_decisions(FINDINGS, DECISIONS[:1], no_bodies).collect()
    assert out["decision"].to_list() == ["accepted"] * 3 + [None, None]  # c: r2; e: rock


def test_decisions_that_cover_nothing_are_stale() -> None:
    gone = [Decision("finding", "r1", "zz", "accepted"), Decision("label", "r2", "rock", "wontfix"),
            Decision("system", "r2", "S2", "accepted")]
    shadowed = Decision("label", "r1", "moon", "accepted")  # covered findings, all won elsewhere
    found = stale(FINDINGS, [*DECISIONS, *gone, shadowed], lambda: BODIES)
    assert found == gone
