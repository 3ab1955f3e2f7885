"""The run's summary: counts by severity, rule, label and family, and what the input lacked."""

from __future__ import annotations

import polars as pl

from bodycensus.engines.summary import build_summary
from bodycensus.input.ingest import IngestReport
from bodycensus.input.schema import guess_mapping
from bodycensus.science.rules.base import FINDING_SCHEMA
from bodycensus.science.severity import SEVERITIES

BODIES = pl.LazyFrame({"id": ["a", "b", "c", "d", "e"],
                       "label": ["rocky", "rocky", "gassy", "odd", "odd"],
                       "family": ["rock", "rock", "gas_giant", "unknown", "unknown"]})


def _findings(rows: list[tuple[str, str, str]]) -> pl.DataFrame:
    frame = pl.DataFrame(rows, schema=["body", "rule", "severity"], orient="row")
    return frame.with_columns(pl.lit(None, dtype).alias(name) for name, dtype
                              in FINDING_SCHEMA.items() if name not in frame.columns)


FAMILIES = {"rocky": "rock", "gassy": "gas_giant", "odd": "unknown"}


def test_counts_by_severity_rule_label_and_family() -> None:
    findings = _findings([("a", "r-one", "impossible"), ("a", "r-two", "suspect"),
                          ("b", "r-two", "suspect"), ("c", "r-three", "note")])
    artefacts = pl.DataFrame({"kind": ["cutoff", "gap"]})
    summary = build_summary(BODIES, findings, artefacts, FAMILIES, None)
    assert summary["rows"] == 5 and summary["findings"] == 4
    assert summary["bodies_with_findings"] == 3 and summary["artefacts"] == 2
    assert summary["by_severity"] == {"error": 0, "impossible": 1, "unstable": 0, "suspect": 2,
                                      "note": 1}
    assert list(summary["by_severity"]) == list(SEVERITIES)  # every severity, in order
    # most common first, ties by name
    assert list(summary["by_rule"].items()) == [("r-two", 2), ("r-one", 1), ("r-three", 1)]
    assert list(summary["by_label"].items()) == [("odd", 2), ("rocky", 2), ("gassy", 1)]
    assert summary["by_family"] == {"rock": 2, "unknown": 2, "gas_giant": 1}
    assert summary["label_families"] == FAMILIES and summary["unmapped_labels"] == ["odd"]
    assert summary["bad_cells"] == {}


def test_no_findings_gives_zero_counts() -> None:
    summary = build_summary(BODIES, _findings([]), pl.DataFrame(), FAMILIES, None)
    assert summary["findings"] == summary["bodies_with_findings"] == 0
    assert summary["by_severity"] == dict.fromkeys(SEVERITIES, 0) and summary["by_rule"] == {}


def test_unreadable_cells_come_from_the_ingest_report() -> None:
    mapping = guess_mapping(["id", "mass_kg"])
    report = IngestReport(rows=5, format="delimited", compression=None, delimiter=",",
                          columns=["id", "mass_kg"], mapping=mapping, unknown_columns=[],
                          bad_cells={"mass_kg": 3})
    summary = build_summary(BODIES, _findings([]), pl.DataFrame(), FAMILIES, report)
    assert summary["bad_cells"] == {"mass_kg": 3}
