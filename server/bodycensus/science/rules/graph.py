"""Parent-chain checks that need more than one join: loops in the chain of parents, and the root
each chain ends at (what keeps a system whole when a catalogue is split into partitions)."""

from __future__ import annotations

from dataclasses import dataclass

import polars as pl

MAX_DEPTH = 64  # hops; real hierarchies are a handful deep (star, planet, moon, sub-moon)


@dataclass(frozen=True)
class Chains:
    """Where each chain of parents ends. ``roots``: id, root for every id with a parent whose
    chain ends (the root is the last id on the chain: a body without a parent, or a parent id
    that no row carries). ``cycle_ids``: ids whose chain never ends."""

    roots: pl.DataFrame
    cycle_ids: pl.Series


def chain_roots(table: pl.LazyFrame) -> Chains:
    """Walk every chain of parents one hop per step (the first row of an id says its parent);
    chains that reach a root drop out with it, so the work shrinks geometrically. Chains still
    walking after ``MAX_DEPTH`` hops lie on a loop or lead into one (self-parents are loops of
    length one). Hand-written: a fixed-point join, which neither polars nor scipy offers."""
    edges = (
        table.select("id", "parent")
        .filter(pl.col("id").is_not_null() & pl.col("parent").is_not_null())
        .unique(subset="id", keep="first")
        .collect(engine="streaming")
    )
    step = edges.rename({"id": "ancestor", "parent": "next"})
    walking = edges.rename({"parent": "ancestor"})
    ended: list[pl.DataFrame] = []
    for _ in range(MAX_DEPTH):
        # once few chains walk on, look their next hop up without hashing every edge again
        nearby = step if walking.height * 4 > step.height else step.filter(
            pl.col("ancestor").is_in(walking["ancestor"].unique().implode()))
        moved = walking.join(nearby, on="ancestor", how="left")
        done = moved["next"].is_null()
        ended.append(moved.filter(done).select("id", pl.col("ancestor").alias("root")))
        walking = moved.filter(~done).select("id", pl.col("next").alias("ancestor"))
        if walking.height == 0:
            break
    roots = pl.concat(ended) if ended else pl.DataFrame(schema={"id": pl.String,
                                                                "root": pl.String})
    return Chains(roots, walking["id"].unique().alias("id"))


def cycle_members(table: pl.LazyFrame) -> pl.Series:
    """Ids whose chain of parents never ends: they lie on a loop or lead into one."""
    return chain_roots(table).cycle_ids
