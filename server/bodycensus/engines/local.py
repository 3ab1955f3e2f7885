"""The single-machine engine: ingest, derive, run every rule and the artefact detector.

``check_file`` is what the CLI's ``check`` and the dashboard's upload jobs call. Every table is
scanned lazily and written with streaming sinks, so memory follows the columns, not the file.
"""

from __future__ import annotations

import os
import time
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import polars as pl

from bodycensus.durable import fsync_path
from bodycensus.engines.summary import build_summary
from bodycensus.input.hosts import HostColumns
from bodycensus.input.ingest import IngestLimits, IngestReport, ingest
from bodycensus.progress import Progress, quiet
from bodycensus.science import artefacts as artefact_detector
from bodycensus.science.artefacts import ARTEFACT_FIELDS
from bodycensus.science.families import FAMILIES, family_mapping
from bodycensus.science.rules import all_rules
from bodycensus.science.rules.base import coverage, evaluate
from bodycensus.science.rules.context import derive
from bodycensus.science.rules.graph import cycle_members
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.severity import SEVERITY_RANK
from bodycensus.storage.manifest import RunSummary


@dataclass(frozen=True)
class CheckOptions:
    """What a run may override: column mapping, units, label families, limits, thresholds."""

    map_overrides: Mapping[str, str] = field(default_factory=dict)
    unit_overrides: Mapping[str, str] = field(default_factory=dict)
    family_overrides: Mapping[str, str] = field(default_factory=dict)
    limits: IngestLimits = field(default_factory=IngestLimits)
    orbit_settings: OrbitSettings = field(default_factory=OrbitSettings)
    artefacts: bool = True
    hosts: HostColumns = field(default_factory=HostColumns)  # host rows from host columns
    nulls: tuple[str, ...] = ()  # cell texts that mean "no value" (``--null``)


@dataclass
class CheckResult:
    """Everything one run produced; the frames are also on disk in ``workdir``."""

    findings: pl.DataFrame
    artefacts: pl.DataFrame
    coverage: pl.DataFrame
    bodies: Path
    summary: RunSummary
    report: IngestReport | None
    families: dict[str, str]

    def worst_severity_rank(self) -> int | None:
        """Rank (0 = error) of the most serious finding, or None when there is none."""
        if self.findings.height == 0:
            return None
        return min(SEVERITY_RANK[s] for s in self.findings["severity"].unique())


def with_families(table: pl.LazyFrame, overrides: Mapping[str, str]) -> tuple[pl.LazyFrame,
                                                                              dict[str, str]]:
    """Fill ``family`` from each label (a valid family given in the file wins over a guess,
    an explicit override wins over both)."""
    labels = table.select(pl.col("label").unique()).collect()["label"].drop_nulls().to_list()
    mapping = family_mapping(sorted(labels), dict(overrides))
    given = pl.when(pl.col("family").is_in(FAMILIES)).then(pl.col("family"))
    guessed = pl.col("label").replace_strict(mapping, default="unknown", return_dtype=pl.String)
    forced = pl.col("label").replace_strict(dict(overrides), default=None, return_dtype=pl.String)
    family = pl.coalesce(forced, given, guessed)
    return table.with_columns(family.alias("family")), mapping


def _write_atomic(frame: pl.DataFrame | pl.LazyFrame, path: Path) -> None:
    """Write Parquet to a temporary name, fsync, then rename into place."""
    tmp = path.with_name(path.name + ".tmp")
    if isinstance(frame, pl.LazyFrame):
        frame.sink_parquet(tmp)
    else:
        frame.write_parquet(tmp)
    fsync_path(tmp)
    os.replace(tmp, path)


def check_table(table: pl.LazyFrame, workdir: Path, options: CheckOptions = CheckOptions(),
                progress: Progress | None = None, report: IngestReport | None = None
                ) -> CheckResult:
    """Run every rule and the artefact detector over a normalised table; write the results."""
    progress = progress or quiet
    workdir.mkdir(parents=True, exist_ok=True)
    table, families = with_families(table, options.family_overrides)
    progress("derive", 0.0)
    context = derive(table, cycle_members(table))
    bodies_path = workdir / "bodies.parquet"
    _write_atomic(context, bodies_path)
    progress("rules", 0.0)
    bodies = pl.scan_parquet(bodies_path)
    rules = all_rules(options.orbit_settings)
    findings = evaluate(bodies, rules).collect()
    _write_atomic(findings, workdir / "findings.parquet")
    rule_coverage = coverage(bodies, rules)
    _write_atomic(rule_coverage, workdir / "coverage.parquet")
    progress("artefacts", 0.0)
    found = (artefact_detector.detect_artefacts(bodies, ARTEFACT_FIELDS) if options.artefacts
             else pl.DataFrame(schema=artefact_detector.ARTEFACT_SCHEMA))
    _write_atomic(found, workdir / "artefacts.parquet")
    progress("write", 1.0)
    summary = build_summary(bodies, findings, found, families, report)
    return CheckResult(findings, found, rule_coverage, bodies_path, summary, report, families)


def check_file(source: Path, workdir: Path, options: CheckOptions = CheckOptions(),
               progress: Progress | None = None) -> CheckResult:
    """Ingest ``source`` into ``workdir`` and check it; see ``check_table``."""
    progress = progress or quiet
    workdir.mkdir(parents=True, exist_ok=True)
    normalised = workdir / "normalised.parquet"
    started = time.monotonic()
    progress("read", 0.0)
    report = ingest(source, normalised, map_overrides=dict(options.map_overrides),
                    unit_overrides=dict(options.unit_overrides), limits=options.limits,
                    hosts=options.hosts, nulls=options.nulls)
    progress("read", 1.0, rows=report.rows)
    result = check_table(pl.scan_parquet(normalised), workdir, options, progress, report)
    normalised.unlink(missing_ok=True)
    result.summary["seconds"] = round(time.monotonic() - started, 3)
    return result
