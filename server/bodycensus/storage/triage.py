"""Decisions laid over a run's findings: which decision covers each finding, which decisions
cover nothing any more (stale), and the findings of a selection.

The most specific decision wins: a finding's own, else its rule's in its system, else its rule's
on its label. Everything stays lazy: a decision table is small and joined to the findings by
hash, so the findings list of a large catalogue is still read once, in its order.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import polars as pl

from bodycensus.storage.decisions import SCOPES, Decision, Scope

DECISION_SCHEMA: dict[str, pl.DataType] = {
    "decision": pl.String(), "decision_scope": pl.String(), "decision_note": pl.String(),
    "decided_by": pl.String(), "decided_at": pl.String()}
DECISION_COLUMNS: tuple[str, ...] = tuple(DECISION_SCHEMA)
SYSTEM = "_system"  # the finding's system, joined in only when a system decision exists
FINDING_KEY: dict[Scope, str] = {"finding": "body", "system": SYSTEM, "label": "label"}
Bodies = Callable[[], pl.LazyFrame]  # the run's bodies, read only when a system is decided


def _table(decisions: Sequence[Decision], scope: Scope) -> pl.LazyFrame:
    """The decisions of one scope: rule, target, and the decision as one struct column."""
    rows = [(d.rule, d.target, d.status, d.scope, d.note, d.by, d.decided) for d in decisions
            if d.scope == scope]
    frame = pl.LazyFrame(rows, schema={"rule": pl.String, "_target": pl.String,
                                       **DECISION_SCHEMA}, orient="row")
    return frame.select("rule", "_target", pl.struct(*DECISION_COLUMNS).alias(f"_d_{scope}"))


def _with_systems(findings: pl.LazyFrame, decisions: Sequence[Decision],
                  bodies: Bodies | None) -> pl.LazyFrame:
    """The findings with their body's system: the system each finding carries (its body's
    row), else looked up in the bodies (only bodies of decided systems)."""
    wanted = sorted({d.target for d in decisions if d.scope == "system"})
    if wanted and "system" in findings.collect_schema():
        return findings.with_columns(pl.col("system").alias(SYSTEM))
    if not wanted or bodies is None:
        return findings.with_columns(pl.lit(None, pl.String).alias(SYSTEM))
    members = (bodies().filter(pl.col("system").is_in(wanted))
               .select(pl.col("id").alias("body"), pl.col("system").alias(SYSTEM))
               .unique(subset=["body"], keep="first"))
    return findings.join(members, on="body", how="left", maintain_order="left")


def with_decisions(findings: pl.LazyFrame, decisions: Sequence[Decision],
                   bodies: Bodies | None = None) -> pl.LazyFrame:
    """The findings, in their order, with the decision columns (null where undecided)."""
    if not decisions:
        return findings.with_columns(
            *[pl.lit(None, dtype).alias(name) for name, dtype in DECISION_SCHEMA.items()])
    out = _with_systems(findings, decisions, bodies)
    present = [scope for scope in SCOPES if any(d.scope == scope for d in decisions)]
    for scope in present:
        out = out.join(_table(decisions, scope), left_on=["rule", FINDING_KEY[scope]],
                       right_on=["rule", "_target"], how="left", maintain_order="left")
    chosen = pl.coalesce([f"_d_{scope}" for scope in present]) if len(present) > 1 \
        else pl.col(f"_d_{present[0]}")
    return (out.with_columns(chosen.alias("_decided"))
            .drop(SYSTEM, *[f"_d_{scope}" for scope in present]).unnest("_decided"))


def undecided(findings: pl.LazyFrame) -> pl.LazyFrame:
    """Only the findings no decision covers (of a frame ``with_decisions`` returned)."""
    return findings.filter(pl.col("decision").is_null())


def matched_keys(findings: pl.LazyFrame, decisions: Sequence[Decision],
                 bodies: Bodies | None = None) -> set[tuple[str, str, str]]:
    """The (scope, rule, target) of each decision that covers at least one finding, whether
    or not a more specific decision wins there."""
    found: set[tuple[str, str, str]] = set()
    have = findings.collect_schema()
    with_systems = _with_systems(findings.select(c for c in ("body", "rule", "label", "system")
                                                 if c in have), decisions, bodies)
    for scope in SCOPES:
        if not any(d.scope == scope for d in decisions):
            continue
        hits = (with_systems.join(_table(decisions, scope), left_on=["rule", FINDING_KEY[scope]],
                                  right_on=["rule", "_target"], how="semi")
                .select("rule", FINDING_KEY[scope]).unique().collect())
        found |= {(scope, rule, target) for rule, target in hits.iter_rows()}
    return found


def stale(findings: pl.LazyFrame, decisions: Sequence[Decision],
          bodies: Bodies | None = None) -> list[Decision]:
    """The decisions that cover no finding of this run (the body, rule, system or label is gone
    or passes now)."""
    matched = matched_keys(findings, decisions, bodies)
    return [d for d in decisions if d.key not in matched]

