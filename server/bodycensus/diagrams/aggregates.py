"""Binned counts for the overview and every registered diagram, computed lazily from the
engine's Parquet files in two passes: labels and axis ranges first, then every count at once.

The browser never receives raw rows: each diagram gets counts on fixed bins (log10 where a
quantity spans decades) plus at most ``base.FLAGGED_CAP`` flagged bodies to draw on top. The
result is plain JSON-ready Python (no NaN), stored as ``aggregates.json`` beside the catalogue.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict
from pathlib import Path
from typing import Any, TypedDict, cast

import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.base import Axis, Pending, Range, Run, records
from bodycensus.diagrams.registry import DIAGRAMS
from bodycensus.diagrams.shapes import CoverageRow
from bodycensus.science.rules.base import FINDING_SCHEMA
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.severity import SEVERITIES, rank
from bodycensus.storage.runs import scan_bodies

VERSION = 4  # the shape of aggregates.json; 1 had no "version" and a key per panel; 2 lacked the
# tidal-heating, remaining-life and rings diagrams; 3 drew density as a histogram per label


class LabelCount(TypedDict):
    """Bodies of one label, with the family most of them have."""

    label: str | None
    family: str | None
    count: int


class FamilyCount(TypedDict):
    """Bodies of one family."""

    family: str | None
    count: int


class SeverityCount(TypedDict):
    """Findings of one severity, and the bodies they are about."""

    severity: str
    count: int
    bodies: int


class RuleCount(TypedDict):
    """Findings of one rule at one severity."""

    rule: str
    severity: str
    count: int


class Aggregates(TypedDict):
    """``aggregates.json``: overview counts, the orbit settings of the check, and each
    registered diagram's aggregate under its key (None when no body has what it needs)."""

    version: int
    rows: int
    labels: list[LabelCount]
    families: list[FamilyCount]
    severity: list[SeverityCount]
    rules: list[RuleCount]
    coverage: list[CoverageRow]
    orbit_settings: dict[str, float]
    diagrams: dict[str, Any]


def compute_aggregates(workdir: Path, settings: OrbitSettings | None = None) -> Aggregates:
    """All overview and diagram aggregates of the engine's output in ``workdir``, for a run
    checked with ``settings`` (the defaults when not given)."""
    settings = settings or OrbitSettings()
    bodies = scan_bodies(workdir)
    findings = (pl.scan_parquet(workdir / "findings.parquet")
                if (workdir / "findings.parquet").exists()
                else pl.LazyFrame(schema=FINDING_SCHEMA))
    artefacts = _read_optional(workdir / "artefacts.parquet")
    columns = frozenset(bodies.collect_schema().names())
    labels, ranges, label_ranges = _labels_and_ranges(bodies, columns)
    run = Run(bodies, findings, artefacts if artefacts is not None else pl.DataFrame(), columns,
              labels, ranges, label_ranges, settings)
    pending = {d.key: d.aggregate(run) for d in DIAGRAMS}
    drawn = {key: p for key, p in pending.items() if p is not None}
    severity, rules, *finished = _collect([_severity_counts(findings), _rule_counts(findings),
                                           *drawn.values()])
    return {
        "version": VERSION, "rows": int(labels["count"].sum()),
        "labels": cast(list[LabelCount], records(labels.select("label", "family", "count"))),
        "families": _families(labels), "severity": severity, "rules": rules,
        "coverage": cast(list[CoverageRow], records(_read_optional(workdir / "coverage.parquet"))),
        "orbit_settings": asdict(settings),
        "diagrams": dict.fromkeys(pending) | dict(zip(drawn, finished, strict=True)),
    }


def _read_optional(path: Path) -> pl.DataFrame | None:
    return pl.read_parquet(path) if path.exists() else None


def _collect(pending: Sequence[Pending[Any]]) -> list[Any]:
    """Collect the plans of every pending aggregate in one pass, then finish each."""
    frames = pl.collect_all([plan for p in pending for plan in p.plans])
    out, start = [], 0
    for p in pending:
        out.append(p.finish(frames[start:start + len(p.plans)]))
        start += len(p.plans)
    return out


def _axes(columns: frozenset[str], per_label: bool) -> list[Axis]:
    """The distinct axes the registered diagrams need ranges of, whose columns exist."""
    return list(dict.fromkeys(axis for d in DIAGRAMS if d.per_label == per_label
                              for axis in d.axes if axis.column in columns))


def _labels_and_ranges(bodies: pl.LazyFrame, columns: frozenset[str]
                       ) -> tuple[pl.DataFrame, dict[Axis, Range], dict[Axis, dict[str, Range]]]:
    """Per label its count, main family and median mass, most common first; every axis's data
    range, and the per-label ranges of per-label diagrams: one pass."""
    global_axes, label_axes = _axes(columns, False), _axes(columns, True)
    names = {axis: f"r{i}" for i, axis in enumerate(global_axes + label_axes)}
    per_label = [pl.len().alias("count"), binning.finite(pl.col("mass")).median()
                 .alias("median_mass"), *[e for a in label_axes for e in a.range_exprs(names[a])]]
    plans = [bodies.group_by("label").agg(per_label),
             bodies.group_by("label", "family").agg(pl.len().alias("n")),
             bodies.select([pl.len(), *[e for a in global_axes for e in a.range_exprs(names[a])]])]
    counts, pairs, ranges_df = pl.collect_all(plans)
    main_family = (pairs.sort(["n", "family"], descending=[True, False], nulls_last=True)
                   .unique("label", keep="first").select("label", "family"))
    labels = (counts.join(main_family, on="label", how="left", nulls_equal=True)
              .sort(["count", "label"], descending=[True, False], nulls_last=True))
    row = ranges_df.row(0, named=True)
    ranges = {a: _coordinates(a, row[f"{names[a]}__lo"], row[f"{names[a]}__hi"])
              for a in global_axes}
    label_ranges = {a: {r["label"]: _coordinates(a, r[f"{names[a]}__lo"], r[f"{names[a]}__hi"])
                        for r in labels.iter_rows(named=True) if r["label"] is not None}
                    for a in label_axes}
    return labels.select("label", "count", "family", "median_mass"), ranges, label_ranges


def _coordinates(axis: Axis, low: float | None, high: float | None) -> Range:
    """A raw value range on an axis."""
    return axis.coordinate(low), axis.coordinate(high)


def _families(labels: pl.DataFrame) -> list[FamilyCount]:
    """Bodies per family, most first."""
    families = labels.group_by("family").agg(pl.col("count").sum()).sort(
        ["count", "family"], descending=[True, False])
    return cast(list[FamilyCount], records(families))


def _severity_counts(findings: pl.LazyFrame) -> Pending[list[SeverityCount]]:
    """Findings and bodies per severity, every severity listed in order."""
    plan = findings.group_by("severity").agg(pl.len().alias("count"),
                                             pl.col("body").n_unique().alias("bodies"))

    def finish(frames: Sequence[pl.DataFrame]) -> list[SeverityCount]:
        found = {r["severity"]: r for r in frames[0].iter_rows(named=True)}
        return [{"severity": s, "count": found.get(s, {}).get("count", 0),
                 "bodies": found.get(s, {}).get("bodies", 0)} for s in SEVERITIES]

    return Pending([plan], finish)


def _rule_counts(findings: pl.LazyFrame) -> Pending[list[RuleCount]]:
    """Findings per rule and severity, most serious and then most common first."""
    plan = findings.group_by("rule", "severity").agg(pl.len().alias("count"))

    def finish(frames: Sequence[pl.DataFrame]) -> list[RuleCount]:
        rows = cast(list[RuleCount], frames[0].to_dicts())
        return sorted(rows, key=lambda r: (rank(r["severity"]), -r["count"], r["rule"]))

    return Pending([plan], finish)
