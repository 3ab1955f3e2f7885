"""The tables of a checked catalogue as lazy frames, for the screens that filter bodies (the
Bodies list, a diagram's selected region, search results): bodies and findings through
``storage.runs`` (which knows the engine's layouts), the name index written when missing.
"""

from __future__ import annotations

from pathlib import Path

import polars as pl

from bodycensus.science.severity import SEVERITIES, rank_expr
from bodycensus.storage.names import has_index, write_name_index
from bodycensus.storage.runs import findings_of, scan_bodies, scan_findings


def bodies(cat_dir: Path) -> pl.LazyFrame:
    """Every body of the catalogue with the columns the run derived (lazy; filter it first),
    in whichever layout the engine wrote (``storage.runs``)."""
    return scan_bodies(cat_dir)


def findings(cat_dir: Path) -> pl.LazyFrame:
    """Every finding, in the list's stored order (lazy)."""
    return scan_findings(cat_dir)


def rows_of(cat_dir: Path, ids: list[str], columns: list[str]) -> pl.DataFrame:
    """The first row of each of ``ids`` (a handful), with those of ``columns`` the table has."""
    lf = bodies(cat_dir)
    schema = lf.collect_schema()  # once, not per column
    have = [c for c in columns if c in schema]
    if not ids:
        return pl.DataFrame(schema={c: pl.String for c in have})
    return (lf.filter(pl.col("id").is_in(ids)).select(have)
            .unique("id", keep="first", maintain_order=True).collect())


def worst_of(cat_dir: Path, ids: list[str]) -> dict[str, tuple[str, int]]:
    """For each of ``ids`` with findings: its most serious severity and how many it has."""
    if not ids:
        return {}
    found = (findings_of(cat_dir, "body", ids).group_by("body")
             .agg(pl.col("severity").sort_by(rank_expr()).first(), pl.len().alias("n"))
             .collect())
    return {b: (s, n) for b, s, n in found.iter_rows()}


def body_worst(cat_dir: Path) -> pl.LazyFrame:
    """Per body with findings: its worst severity's rank (``_rank``) and its number of findings
    (``findings``), a count per severity too (a pass over the findings, not the bodies)."""
    return (findings(cat_dir).with_columns(_rank=rank_expr()).group_by("body")
            .agg(pl.len().alias("findings"), pl.col("_rank").min(),
                 *[(pl.col("severity") == s).sum().alias(s) for s in SEVERITIES]))


def name_index(cat_dir: Path) -> Path:
    """The folder holding the catalogue's name index, written now if an older run lacks it."""
    if not has_index(cat_dir):
        write_name_index(bodies(cat_dir), cat_dir)
    return cat_dir
