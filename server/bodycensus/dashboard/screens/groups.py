"""Findings grouped by rule and label: how many of each, at which severities, the worst margin
and three example bodies (the furthest past the limit): the first thing a curator of a million
findings reads. One group-by over the findings table (never the bodies); without filters the
answer is kept beside the catalogue (``groups.json``) after its first request.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any, TypedDict, cast

import polars as pl

from bodycensus.dashboard.screens import tables
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.science.severity import SEVERITIES, rank_expr
from bodycensus.storage.store import json_ready, write_json_atomic

GROUPS_FILE = "groups.json"
EXAMPLES = 3
VERSION = 2  # 1 listed a body twice among the examples when it held two findings


class Example(TypedDict):
    """An example body of a group: its id and name."""

    body: str
    name: str | None


class Group(TypedDict):
    """Findings of one rule on bodies of one label."""

    rule: str
    label: str | None
    family: str | None
    findings: int
    bodies: int
    counts: dict[str, int]
    worst: str
    worst_margin: float | None
    examples: list[Example]


def _plan(lf: pl.LazyFrame) -> pl.LazyFrame:
    """The group-by: counts per severity, bodies, worst margin and the three worst bodies."""
    names = pl.col("name") if "name" in lf.collect_schema() else pl.lit(None, pl.String)
    order = [rank_expr(), -pl.col("margin").fill_null(float("-inf"))]
    return (lf.with_columns(_name=names, _rank=rank_expr())
            .group_by("rule", "label")
            .agg(pl.len().alias("findings"), pl.col("body").n_unique().alias("bodies"),
                 pl.col("family").mode().first().alias("family"),
                 *[(pl.col("severity") == s).sum().alias(s) for s in SEVERITIES],
                 pl.col("_rank").min(), pl.col("margin").max().alias("worst_margin"),
                 pl.struct(body="body", name="_name").sort_by(order)
                 .filter(pl.col("body").sort_by(order).is_first_distinct()).head(EXAMPLES)
                 .alias("examples"))
            .sort(["_rank", "findings", "rule", "label"], descending=[False, True, False, False],
                  nulls_last=True))


def _finish(frame: pl.DataFrame) -> list[Group]:
    """The collected groups as plain rows."""
    rows = []
    for r in frame.to_dicts():
        counts = {s: int(r[s]) for s in SEVERITIES if r[s]}
        rows.append({"rule": r["rule"], "label": r["label"], "family": r["family"],
                     "findings": r["findings"], "bodies": r["bodies"], "counts": counts,
                     "worst": SEVERITIES[r["_rank"]], "worst_margin": r["worst_margin"],
                     "examples": r["examples"]})
    return cast(list[Group], json_ready(rows))


def groups(cat_dir: Path, state: ViewState) -> list[Group]:
    """The findings passing the view's severity, rule, label and family filters, grouped by
    rule and label, most serious first, then most findings."""
    filters = [pl.col(c).is_in(list(v)) for c, v in (("severity", state.severity),
                                                     ("rule", state.rule),
                                                     ("label", state.label),
                                                     ("family", state.family)) if v]
    if not filters:
        return _stored(cat_dir)
    return _finish(_plan(tables.findings(cat_dir).filter(*filters)).collect())


def _stored(cat_dir: Path) -> list[Group]:
    """The unfiltered groups, computed once and kept beside the catalogue."""
    path = cat_dir / GROUPS_FILE
    if path.is_file():
        stored: dict[str, Any] = json.loads(path.read_text(encoding="utf-8"))
        if stored.get("version") == VERSION:
            return cast(list[Group], stored["groups"])
    found = _finish(_plan(tables.findings(cat_dir)).collect())
    write_json_atomic(path, {"version": VERSION, "groups": found})
    return found
