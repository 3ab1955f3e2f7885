"""Parent-chain checks that need more than one join: loops in the chain of parents."""

from __future__ import annotations

import polars as pl

MAX_DEPTH = 64  # hops; real hierarchies are a handful deep (star, planet, moon, sub-moon)


def cycle_members(table: pl.LazyFrame) -> pl.Series:
    """Ids whose chain of parents never ends: they lie on a loop or lead into one.

    Walks every chain one hop per step; chains that reach a root drop out, so the work shrinks
    geometrically. Self-parents are loops of length one.
    """
    edges = (
        table.select("id", "parent")
        .filter(pl.col("id").is_not_null() & pl.col("parent").is_not_null())
        .unique(subset="id", keep="first")
        .collect()
    )
    step = edges.rename({"id": "ancestor", "parent": "next"})
    walking = edges.rename({"parent": "ancestor"})
    looped: list[pl.Series] = []
    for _ in range(MAX_DEPTH):
        at_self = walking["ancestor"] == walking["id"]
        looped.append(walking.filter(at_self)["id"])
        walking = (
            walking.filter(~at_self)
            .join(step, on="ancestor", how="inner")
            .select("id", pl.col("next").alias("ancestor"))
        )
        if walking.height == 0:
            break
    looped.append(walking["id"])
    return pl.concat(looped).unique().alias("id")
