"""The Triage screen's data: findings grouped by rule within a label or a system, how many of
each group are still undecided, the group's own decision, and what a selection expands to.

Like ``queries``, every function takes a finished catalogue folder and returns JSON-ready data;
the decisions come from the store (``decisions_of``), keyed by the catalogue's key.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Literal, TypedDict, cast

import polars as pl

from bodycensus.dashboard.screens.queries import filtered_findings
from bodycensus.dashboard.screens.systems import NO_SYSTEM, scan_systems
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.errors import BadInput
from bodycensus.science.severity import name_expr, rank_expr
from bodycensus.storage.decisions import STATUSES, Decision
from bodycensus.storage.runs import findings_of, scan_bodies, scan_findings
from bodycensus.storage.store import Store, json_ready
from bodycensus.storage.triage import stale, with_decisions

GROUPS_SHOWN = 200  # groups listed on the screen, most serious and most undecided first
MAX_SELECTION = 50_000  # findings one "every finding matching" decision may cover
Grouping = Literal["label", "system"]


class TriageCounts(TypedDict):
    """Findings in all, undecided, and decided per status."""

    findings: int
    undecided: int
    confirmed: int
    accepted: int
    wontfix: int


class Group(TypedDict):
    """A rule within a label or a system: its findings, how many are undecided, per status."""

    rule: str
    target: str
    severity: str
    findings: int
    undecided: int
    confirmed: int
    accepted: int
    wontfix: int
    decision: str | None  # the decision of exactly this group, if any
    note: str | None
    by: str | None


class Groups(TypedDict):
    """The Triage screen's table."""

    by: Grouping
    total: int
    shown: int
    items: list[Group]


def decisions_of(store: Store, cat_id: str) -> tuple[str, list[Decision]]:
    """The catalogue's key and the decisions kept under it."""
    key = store.decisions.key_of(cat_id, store.get(cat_id).name)
    return key, store.decisions.of(key)


def _status_counts() -> list[pl.Expr]:
    return [(pl.col("decision") == s).sum().alias(s) for s in STATUSES]


def triage_counts(cat_dir: Path, decisions: Sequence[Decision]) -> TriageCounts:
    """How many findings there are, how many are undecided, how many have each status."""
    lf = with_decisions(scan_findings(cat_dir), decisions, lambda: scan_bodies(cat_dir))
    row = lf.select(pl.len().alias("findings"), pl.col("decision").is_null().sum()
                    .alias("undecided"), *_status_counts()).collect().row(0, named=True)
    return cast(TriageCounts, row)


def counts_by(cat_dir: Path, decisions: Sequence[Decision], by: Literal["body", "system"],
              targets: Sequence[str]) -> dict[str, TriageCounts]:
    """Findings, undecided and decided per status of each listed body or system: the decision
    badges of a list that shows bodies or systems (only the listed ones are counted; a system's
    findings are those whose body row is in it)."""
    if not targets:
        return {}
    findings = scan_findings(cat_dir)
    if by == "body":
        own = findings_of(cat_dir, "body", targets)
        keyed = with_decisions(own, decisions, lambda: scan_bodies(cat_dir)).rename({"body": "key"})
    elif "system" in findings.collect_schema():  # the system each finding carries
        own = findings_of(cat_dir, "system", targets)
        keyed = with_decisions(own, decisions).with_columns(key=pl.col("system"))
    else:
        members = (scan_systems(cat_dir, list(targets), ["id"])
                   .filter(pl.col("system").is_in(list(targets)))
                   .select(pl.col("id").alias("body"), pl.col("system").alias("key"))
                   .unique())  # an id given twice counts in each system that lists it
        own = findings.join(members.select("body"), on="body", how="semi")
        keyed = (with_decisions(own, decisions, lambda: scan_bodies(cat_dir))
                 .join(members, on="body", how="left"))
    rows = (keyed.group_by("key").agg(pl.len().alias("findings"), pl.col("decision").is_null()
                                      .sum().alias("undecided"), *_status_counts())
            .collect().iter_rows(named=True))
    return {row.pop("key"): cast(TriageCounts, row) for row in rows}


def _with_targets(cat_dir: Path, lf: pl.LazyFrame, by: Grouping) -> pl.LazyFrame:
    """The findings with ``target``: their label, or their body's system (the one each finding
    carries, else looked up in the bodies)."""
    if by == "label":
        return lf.with_columns(pl.col("label").alias("target"))
    if "system" in lf.collect_schema():
        return lf.with_columns(pl.col("system").alias("target"))
    systems = (scan_bodies(cat_dir).select(pl.col("id").alias("body"),
                                           pl.col("system").alias("target"))
               .unique(subset=["body"], keep="first"))
    return lf.join(systems, on="body", how="left")


def _grouped(lf: pl.LazyFrame) -> pl.LazyFrame:
    """Findings (with decisions and a ``target``) counted per rule and target."""
    return (lf.filter(pl.col("target").is_not_null()).group_by("rule", "target")
            .agg(pl.len().alias("findings"), pl.col("decision").is_null().sum()
                 .alias("undecided"), *_status_counts(), rank_expr().min().alias("_rank")))


def _items(table: pl.LazyFrame, decisions: Sequence[Decision], by: Grouping
           ) -> tuple[int, list[Group]]:
    """How many groups there are, and the first ``GROUPS_SHOWN``, most serious and most
    undecided first, each with its own decision."""
    rows = (table.sort(["_rank", "undecided", "rule", "target"],
                       descending=[False, True, False, False])
            .with_columns(severity=name_expr("_rank")).drop("_rank").collect())
    own = {d.key[1:]: d for d in decisions if d.scope == by}
    items = []
    for row in rows.head(GROUPS_SHOWN).iter_rows(named=True):
        mine = own.get((row["rule"], row["target"]))
        items.append({**row, "decision": mine.status if mine else None,
                      "note": mine.note if mine else None, "by": mine.by if mine else None})
    return rows.height, cast(list[Group], json_ready(items))


def triage_groups(cat_dir: Path, decisions: Sequence[Decision], state: ViewState) -> Groups:
    """The groups of the catalogue's findings by rule and label (or system), most serious and
    most undecided first; only groups with undecided findings when the view asks."""
    by: Grouping = "system" if state.by == "system" else "label"
    lf = with_decisions(scan_findings(cat_dir), decisions, lambda: scan_bodies(cat_dir))
    grouped = _grouped(_with_targets(cat_dir, lf, by))
    if state.undecided:
        grouped = grouped.filter(pl.col("undecided") > 0)
    total, items = _items(grouped, decisions, by)
    return {"by": by, "total": total, "shown": len(items), "items": items}


def system_groups(cat_dir: Path, decisions: Sequence[Decision], system: str) -> list[Group]:
    """The findings of one system's bodies per rule: the System screen's decide table (from
    the system each finding carries; else the bodies read from the system's own partitions)."""
    findings = scan_findings(cat_dir)
    if "system" in findings.collect_schema():
        own = (findings.filter(pl.col("system").is_null()) if system == NO_SYSTEM
               else findings_of(cat_dir, "system", [system]))
    else:
        members = (scan_systems(cat_dir, [system], ["id"]).filter(pl.col("system") == system)
                   .select(pl.col("id").alias("body")).unique())
        own = findings.join(members, on="body", how="semi")
    lf = with_decisions(own, decisions, lambda: scan_bodies(cat_dir))
    return _items(_grouped(lf.with_columns(pl.lit(system).alias("target"))), decisions,
                  "system")[1]


def selection(cat_dir: Path, state: ViewState, decisions: Sequence[Decision]
              ) -> list[tuple[str, str]]:
    """The (body, rule) of every finding the view shows (all pages): what "decide every
    finding matching" covers; BadInput past ``MAX_SELECTION``."""
    found = (filtered_findings(cat_dir, state.with_(offset=0), decisions)
             .select("body", "rule").unique(maintain_order=True).head(MAX_SELECTION + 1)
             .collect())
    if found.height > MAX_SELECTION:
        raise BadInput(f"more than {MAX_SELECTION:,} findings match; narrow the filters or "
                       "decide the group (rule within a label or a system) on the Triage screen")
    return [(body, rule) for body, rule in found.iter_rows() if body is not None]


def stale_decisions(cat_dir: Path, decisions: Sequence[Decision]) -> list[Decision]:
    """The decisions of the catalogue's key that cover no finding of this upload."""
    return stale(scan_findings(cat_dir), decisions, lambda: scan_bodies(cat_dir))
