"""The run's summary: counts by severity, rule, label and family, and what the input lacked."""

from __future__ import annotations

import polars as pl

from bodycensus.input.ingest import IngestReport
from bodycensus.science.severity import SEVERITIES
from bodycensus.storage.manifest import RunSummary


def _counts(frame: pl.DataFrame | pl.LazyFrame, column: str) -> dict[str, int]:
    """``{value: rows}`` for one column, most common first."""
    lazy = frame.lazy() if isinstance(frame, pl.DataFrame) else frame
    counted = (lazy.group_by(column).agg(pl.len().alias("n"))
               .sort(["n", column], descending=[True, False]).collect())
    return {str(k): int(n) for k, n in counted.iter_rows()}


def build_summary(bodies: pl.LazyFrame, findings: pl.DataFrame, artefacts: pl.DataFrame,
                  families: dict[str, str], report: IngestReport | None) -> RunSummary:
    """A JSON-ready summary of one run."""
    by_severity = _counts(findings, "severity") if findings.height else {}
    return {
        "rows": int(bodies.select(pl.len()).collect().item()),
        "findings": findings.height,
        "bodies_with_findings": findings["body"].n_unique() if findings.height else 0,
        "by_severity": {s: by_severity.get(s, 0) for s in SEVERITIES},
        "by_rule": _counts(findings, "rule") if findings.height else {},
        "by_label": _counts(bodies, "label"),
        "by_family": _counts(bodies, "family"),
        "label_families": families,
        "unmapped_labels": sorted(label for label, f in families.items() if f == "unknown"),
        "artefacts": artefacts.height,
        "bad_cells": dict(report.bad_cells) if report is not None else {},
        "reading_notes": list(report.notes) if report is not None else [],
    }
