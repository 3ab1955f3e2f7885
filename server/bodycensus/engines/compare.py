"""Compare two checked runs of a catalogue: bodies added, removed and changed (matched by id),
findings new, fixed and unchanged (matched by body and rule), distribution shifts per label and
field (``engines.shifts``), and artefacts that appeared or vanished.

Built on what the engine writes (``storage.runs``): every pass is a lazy polars plan collected
with the streaming engine, joins on the id carry only the id and the compared fields, and the
results are counts and a few examples, never rows by the million.
"""

from __future__ import annotations

import math
import time
from pathlib import Path
from typing import Any, TypedDict

import polars as pl

from bodycensus.engines.shifts import SAMPLE_CAP, ShiftRow, compare_distributions
from bodycensus.input.schema import CANONICAL_FIELDS
from bodycensus.science.severity import SEVERITY_RANK, rank_expr
from bodycensus.science.shift import FDR
from bodycensus.storage.runs import read_artefacts, scan_bodies, scan_findings

COMPARED_FIELDS = tuple(f for f in CANONICAL_FIELDS if f not in ("id", "family"))
EXAMPLES = 10  # ids listed per kind of change
BUCKET_ROWS = 1_000_000  # bodies per bucket of the id join: bounds its memory
BUCKET_SEED = 11
ARTEFACT_KEY = ("scope", "label", "field", "kind")
SAME_PLACE = 0.05  # artefacts of one key whose places differ by less than this share match


class RunInfo(TypedDict):
    """Which run: its name, bodies and findings."""

    name: str
    bodies: int
    findings: int


class BodiesDiff(TypedDict):
    """Bodies matched by id (bodies without an id are left out of the matching)."""

    added: int
    removed: int
    changed: int
    unchanged: int
    changed_fields: dict[str, int]  # field -> bodies whose value of it changed
    by_label: list[dict[str, Any]]  # label, added, removed, changed
    examples: dict[str, list[str]]  # added / removed / changed -> a few ids


class FindingsDiff(TypedDict):
    """Findings matched by (body, rule): new in the new run, fixed, or in both."""

    new: int
    fixed: int
    unchanged: int
    by_severity: list[dict[str, Any]]  # severity, new, fixed, unchanged
    by_group: list[dict[str, Any]]  # rule, label, severity, new, fixed, unchanged


class ArtefactsDiff(TypedDict):
    """Distribution artefacts that appeared, vanished or stayed."""

    appeared: list[dict[str, Any]]
    vanished: list[dict[str, Any]]
    persisted: int


class Comparison(TypedDict):
    """Everything ``compare_runs`` found, JSON-ready."""

    old: RunInfo
    new: RunInfo
    bodies: BodiesDiff
    findings: FindingsDiff
    shifts: list[ShiftRow]
    artefacts: ArtefactsDiff
    fdr: float
    sample_cap: int
    seconds: float


def _fields(old: pl.LazyFrame, new: pl.LazyFrame) -> list[str]:
    both = set(old.collect_schema()) & set(new.collect_schema())
    return [f for f in COMPARED_FIELDS if f in both]


def _bucket_counts(old: pl.LazyFrame, new: pl.LazyFrame, fields: list[str],
                   bucket: pl.Expr) -> tuple[dict[str, Any], pl.DataFrame]:
    """One bucket of ids: its totals (kinds of change, changed fields, example ids) and its
    counts per label, from one streaming join of the compared fields on the id."""
    keep = [pl.col("id").is_not_null(), bucket]
    joined = (old.select("id", *fields).filter(*keep)
              .join(new.select("id", *fields).filter(*keep), on="id", how="full",
                    suffix="_new"))
    added, removed = pl.col("id").is_null(), pl.col("id_new").is_null()
    both = ~added & ~removed
    differs = {f: pl.col(f).ne_missing(pl.col(f"{f}_new")) & both for f in fields}
    changed = pl.any_horizontal(*differs.values()) if differs else pl.lit(False)
    marked = joined.with_columns(_added=added, _removed=removed, _changed=changed,
                                 _label=pl.coalesce("label_new", "label") if "label" in fields
                                 else pl.lit(None, pl.String)).collect(engine="streaming")
    totals = marked.select(
        pl.col("_added").sum(), pl.col("_removed").sum(), pl.col("_changed").sum(),
        (~pl.col("_added") & ~pl.col("_removed") & ~pl.col("_changed")).sum().alias("_same"),
        *[differs[f].sum().alias(f) for f in fields],
        pl.col("id_new").filter("_added").bottom_k(EXAMPLES).implode().alias("ex_added"),
        pl.col("id").filter("_removed").bottom_k(EXAMPLES).implode().alias("ex_removed"),
        pl.col("id").filter("_changed").bottom_k(EXAMPLES).implode().alias("ex_changed"),
    ).row(0, named=True)
    by_label = marked.group_by("_label").agg(pl.col("_added", "_removed", "_changed").sum())
    return totals, by_label


def bodies_diff(old: pl.LazyFrame, new: pl.LazyFrame) -> BodiesDiff:
    """Added, removed and changed bodies, by id. The ids are split by hash into buckets of
    about ``BUCKET_ROWS`` bodies, each joined on its own, so memory follows the bucket, not the
    catalogue (a bucket's scan reads the id column first and skips the rest of other buckets)."""
    fields = _fields(old, new)
    rows = max(int(lf.select(pl.len()).collect().item()) for lf in (old, new))
    count = max(1, math.ceil(rows / BUCKET_ROWS))
    key = pl.col("id").hash(seed=BUCKET_SEED) % count
    parts = [_bucket_counts(old, new, fields, key == k) for k in range(count)]
    totals = {name: sum(p[0][name] for p in parts)
              for name in ("_added", "_removed", "_changed", "_same", *fields)}
    examples = {kind: sorted(i for p in parts for i in p[0][f"ex_{kind}"])[:EXAMPLES]
                for kind in ("added", "removed", "changed")}
    by_label = (pl.concat([p[1] for p in parts]).group_by("_label").sum()
                .rename({"_label": "label", "_added": "added", "_removed": "removed",
                         "_changed": "changed"})
                .filter((pl.col("added") + pl.col("removed") + pl.col("changed")) > 0)
                .sort(["changed", "label"], descending=[True, False], nulls_last=True))
    return {"added": totals["_added"], "removed": totals["_removed"],
            "changed": totals["_changed"], "unchanged": totals["_same"],
            "changed_fields": {f: totals[f] for f in fields if totals[f]},
            "by_label": by_label.to_dicts(), "examples": examples}


def finding_keys(findings: pl.LazyFrame) -> pl.LazyFrame:
    """One row per (body, rule): its most serious severity's rank and its label."""
    return (findings.with_columns(_rank=rank_expr())
            .group_by("body", "rule").agg(pl.col("_rank").min(), pl.col("label").first()))


def new_findings(old: pl.LazyFrame, new: pl.LazyFrame, at_or_above: str) -> pl.LazyFrame:
    """The findings of ``new`` at or above a severity whose (body, rule) had none at or above it
    in ``old``: a finding that got more serious counts as new at its new level."""
    level = SEVERITY_RANK[at_or_above]
    before = (old.filter(rank_expr() <= level).select("body", "rule").unique())
    return new.filter(rank_expr() <= level).join(before, on=["body", "rule"], how="anti",
                                                  maintain_order="left")


def findings_diff(old: pl.LazyFrame, new: pl.LazyFrame) -> FindingsDiff:
    """New, fixed and unchanged findings overall, by severity and by rule and label."""
    joined = finding_keys(old).join(finding_keys(new), on=["body", "rule"], how="full",
                                    coalesce=True, suffix="_new")
    status = (pl.when(pl.col("_rank").is_null()).then(pl.lit("new"))
              .when(pl.col("_rank_new").is_null()).then(pl.lit("fixed"))
              .otherwise(pl.lit("unchanged")))
    counted = (joined.with_columns(_status=status,
                                   _rank=pl.coalesce("_rank_new", "_rank"),
                                   label=pl.coalesce("label_new", "label"))
               .group_by("rule", "label", "_status")
               .agg(pl.len().alias("n"), pl.col("_rank").min())
               .collect(engine="streaming"))
    groups = (counted.pivot(on="_status", index=["rule", "label"], values="n",
                            aggregate_function="sum")
              .join(counted.group_by("rule", "label").agg(pl.col("_rank").min()),
                    on=["rule", "label"], how="left"))
    for kind in ("new", "fixed", "unchanged"):
        if kind not in groups.columns:
            groups = groups.with_columns(pl.lit(0, pl.UInt32).alias(kind))
    groups = (groups.with_columns(pl.col(k).fill_null(0) for k in ("new", "fixed", "unchanged"))
              .with_columns(severity=_severity_name("_rank"))
              .sort(["new", "fixed", "rule", "label"], descending=[True, True, False, False],
                    nulls_last=True))
    by_severity = (groups.group_by("severity", "_rank")
                   .agg(pl.col("new", "fixed", "unchanged").sum()).sort("_rank"))
    return {"new": int(groups["new"].sum()), "fixed": int(groups["fixed"].sum()),
            "unchanged": int(groups["unchanged"].sum()),
            "by_severity": by_severity.drop("_rank").to_dicts(),
            "by_group": groups.select("rule", "label", "severity", "new", "fixed",
                                      "unchanged").to_dicts()}


def _severity_name(rank_column: str) -> pl.Expr:
    names = {rank: name for name, rank in SEVERITY_RANK.items()}
    return pl.col(rank_column).replace_strict(names, default=None, return_dtype=pl.String)


def _place(row: dict[str, Any]) -> float | None:
    at = row.get("at")
    return float(at) if at is not None else None


def _same_place(a: dict[str, Any], b: dict[str, Any]) -> bool:
    """Two artefacts of one key at the same place (within ``SAME_PLACE`` of each other)."""
    x, y = _place(a), _place(b)
    if x is None or y is None:
        return x is None and y is None
    return abs(x - y) <= SAME_PLACE * max(abs(x), abs(y)) or x == y


def artefacts_diff(old: pl.DataFrame, new: pl.DataFrame) -> ArtefactsDiff:
    """Artefacts of the new run with no match in the old (appeared), the reverse (vanished)."""
    olds, news = old.to_dicts(), new.to_dicts()
    unmatched_old = list(olds)
    appeared = []
    for artefact in news:
        match = next((o for o in unmatched_old
                      if all(o.get(k) == artefact.get(k) for k in ARTEFACT_KEY)
                      and _same_place(o, artefact)), None)
        if match is None:
            appeared.append(artefact)
        else:
            unmatched_old.remove(match)
    return {"appeared": appeared, "vanished": unmatched_old,
            "persisted": len(news) - len(appeared)}


def _info(name: str, bodies: pl.LazyFrame, findings: pl.LazyFrame) -> RunInfo:
    return {"name": name, "bodies": int(bodies.select(pl.len()).collect().item()),
            "findings": int(findings.select(pl.len()).collect().item())}


def compare_runs(old_dir: Path, new_dir: Path, names: tuple[str, str] | None = None,
                 fdr: float = FDR, cap: int = SAMPLE_CAP) -> Comparison:
    """Compare the run in ``old_dir`` with the run in ``new_dir`` (folders the engine wrote)."""
    started = time.monotonic()
    names = names or (old_dir.name, new_dir.name)
    bodies = scan_bodies(old_dir), scan_bodies(new_dir)
    findings = scan_findings(old_dir), scan_findings(new_dir)
    result: Comparison = {
        "old": _info(names[0], bodies[0], findings[0]),
        "new": _info(names[1], bodies[1], findings[1]),
        "bodies": bodies_diff(*bodies),
        "findings": findings_diff(*findings),
        "shifts": compare_distributions(*bodies, fdr, cap),
        "artefacts": artefacts_diff(read_artefacts(old_dir), read_artefacts(new_dir)),
        "fdr": fdr, "sample_cap": cap, "seconds": 0.0,
    }
    result["seconds"] = round(time.monotonic() - started, 3)
    return result
