"""Severities, defined once: their order (DESIGN.md's vocabulary), ranks and polars forms."""

from __future__ import annotations

import re
from pathlib import Path

import polars as pl

from bodycensus.science import severity
from bodycensus.science.severity import SEVERITIES, at_or_above, name_expr, rank, rank_expr

PACKAGE = Path(severity.__file__).resolve().parents[1]


def test_most_serious_first() -> None:
    # DESIGN.md: error (broken data), impossible, unstable, suspect, note
    assert SEVERITIES == ("error", "impossible", "unstable", "suspect", "note")
    assert [rank(s) for s in SEVERITIES] == [0, 1, 2, 3, 4]
    assert rank("fatal") == rank(None) == severity.UNRANKED > rank("note")


def test_at_or_above() -> None:
    assert at_or_above("error") == ("error",)
    assert at_or_above("unstable") == ("error", "impossible", "unstable")
    assert at_or_above("note") == SEVERITIES


def test_sorting_by_rank_puts_the_most_serious_first_and_others_last() -> None:
    frame = pl.DataFrame({"severity": ["note", "bogus", "impossible", "error", "suspect"]})
    ordered = frame.sort(rank_expr())["severity"].to_list()
    assert ordered == ["error", "impossible", "suspect", "note", "bogus"]


def test_ranks_back_to_names() -> None:
    frame = pl.DataFrame({"r": [0, 3, severity.UNRANKED, None]}, schema={"r": pl.Int8})
    assert frame.select(name_expr("r"))["r"].to_list() == ["error", "suspect", None, None]


def test_no_module_keeps_a_list_of_its_own() -> None:
    # the order is written once: no other module spells out a run of severities
    run = re.compile(r"""["']error["']\s*,\s*["']impossible["']""")
    spelled = [p.relative_to(PACKAGE).as_posix() for p in PACKAGE.rglob("*.py")
               if run.search(p.read_text(encoding="utf-8"))]
    assert spelled == ["science/severity.py"]
