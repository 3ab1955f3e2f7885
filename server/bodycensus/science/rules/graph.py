"""Parent-chain checks that need more than one join: loops in the chain of parents, and the root
each chain ends at (what keeps a system whole when a catalogue is split into partitions).

The chains are walked on 64-bit hashes of the ids in numpy: one stable sort of the hashes gives
each id's first row (its parent) and the hashes on more than one row, and the walk follows
integer positions. That is 17 bytes a body and a few arrays of its size; polars' joins of the
ids' text held 2.2 GiB at 10 million bodies, its joins of the hashes 0.9 GiB. Hashes stand for
ids only where no two different ids share one (checked on the few repeated hashes); otherwise
the walk runs on integer codes of the ids' text, so loops are always found exactly."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt
import polars as pl

MAX_DEPTH = 64  # hops; real hierarchies are a handful deep (star, planet, moon, sub-moon)
HASH_SEED = 0  # the seed of every id hash (the partition buckets use the same hashes)
Keys = npt.NDArray[np.uint64]


def id_hash(column: str) -> pl.Expr:
    """The 64-bit hash of an id column (a null id hashes to a value too: filter nulls first)."""
    return pl.col(column).hash(seed=HASH_SEED)


@dataclass(frozen=True)
class Chains:
    """Where each chain of parents ends. ``roots``: id, root for every id that is some row's
    parent and has a parent itself, whose chain ends (the root is the last id on the chain: a
    body without a parent, or a parent id that no row carries), sorted by id, as id hashes
    (UInt64), or as text where two ids share a hash (what a body's bucket is looked up by).

    ``cycle_ids``: ids (text) whose chain never ends. ``repeated``: hashes of ids on more than
    one row (duplicated ids, for ``context.duplicate_ids``)."""

    roots: pl.DataFrame
    cycle_ids: pl.Series
    repeated: pl.Series

    @property
    def hashed(self) -> bool:
        """Whether ``roots`` holds id hashes (else the ids' text)."""
        return self.roots.schema["id"] == pl.UInt64


@dataclass(frozen=True)
class _Walked:
    """The chains of a graph of integer keys: ``nodes`` (sorted distinct ids that have a
    parent), ``roots`` (the root key of each node's chain; meaningless where ``looped``),
    ``looped`` (the node's chain never ends), ``parented`` (the node is some row's parent),
    ``repeated`` (keys on more than one row)."""

    nodes: Keys
    roots: Keys
    looped: npt.NDArray[np.bool_]
    parented: npt.NDArray[np.bool_]
    repeated: Keys

    @property
    def kept(self) -> npt.NDArray[np.bool_]:
        """The nodes whose root ``Chains.roots`` keeps: parents whose chain ends."""
        return self.parented & ~self.looped


def _walk(rows: list[npt.NDArray[Any]]) -> _Walked:
    """Walk every chain of parents (``rows``: each row's id key, its parent's key, whether it
    has a parent; emptied here, so each array is freed as soon as the walk is done with it: 8
    bytes a body less at the peak; the first row of an id says its parent) one hop per step
    over integer positions;
    chains that reach a root drop out, so the work shrinks geometrically. Chains still walking
    after ``MAX_DEPTH`` hops lie on a loop or lead into one (self-parents are loops of length
    one). Hand-written: a fixed-point walk, which neither polars nor scipy offers, and polars'
    joins held several times the memory of these arrays."""
    ids, parents, has_parent = rows
    rows.clear()
    order = np.argsort(ids, kind="stable")  # stable: an id's first row comes first
    ordered = ids[order]
    del ids
    first = np.ones(ordered.size, dtype=np.bool_)
    first[1:] = ordered[1:] != ordered[:-1]
    starts = np.flatnonzero(first)
    repeated = ordered[starts[np.diff(starts, append=ordered.size) > 1]]
    keep = order[starts]
    del order, first
    with_parent = has_parent[keep]
    nodes, up = ordered[starts][with_parent], parents[keep[with_parent]]  # sorted by key
    del ordered, keep, starts, with_parent
    parented = _parents_among(nodes, parents, has_parent)
    del parents, has_parent
    at = np.empty(up.size, dtype=np.int64)
    by_parent = np.argsort(up)  # searching sorted keys: 10x faster than in row order
    at[by_parent] = np.minimum(np.searchsorted(nodes, up[by_parent]), max(nodes.size - 1, 0))
    del by_parent
    step = np.where(nodes[at] == up, at, -1)
    last = np.arange(nodes.size)  # the last node of each chain (its parent is no node)
    walking = np.flatnonzero(step >= 0)
    current = step[walking]
    for _ in range(MAX_DEPTH):
        if walking.size == 0:
            break
        ahead = step[current]
        done = ahead < 0
        last[walking[done]] = current[done]
        walking, current = walking[~done], ahead[~done]
    looped = np.zeros(nodes.size, dtype=np.bool_)
    looped[walking] = True
    return _Walked(nodes, up[last], looped, parented, repeated)


def _parents_among(nodes: Keys, parents: Keys,
                   has_parent: npt.NDArray[np.bool_]) -> npt.NDArray[np.bool_]:
    """Which of the sorted ``nodes`` are the parent of some row: only those need their root
    kept (a system's bucket is looked up by a body's parent), a quarter of the ids in a demo."""
    found = np.zeros(nodes.size, dtype=np.bool_)
    if nodes.size == 0:
        return found
    # the distinct parents first (a hash pass), then a search of sorted keys: 4x faster than
    # a binary search of every row's parent in row order
    distinct = np.sort(pl.Series(parents).filter(pl.Series(has_parent)).unique().to_numpy())
    at = np.minimum(np.searchsorted(nodes, distinct), nodes.size - 1)
    found[at[nodes[at] == distinct]] = True
    return found



def _hash_keys(table: pl.LazyFrame) -> pl.DataFrame:
    """Every row with an id: its hash, its parent's hash, whether it has a parent (17 bytes)."""
    return (table.filter(pl.col("id").is_not_null())
            .select(id_hash("id").alias("id"), id_hash("parent").alias("parent"),
                    pl.col("parent").is_not_null().alias("has_parent"))
            .collect(engine="streaming"))


def _colliding(table: pl.LazyFrame, repeated: Keys) -> bool:
    """Whether two different ids share a hash among ``repeated`` (only those rows are read)."""
    if repeated.size == 0:
        return False
    shared = (table.filter(pl.col("id").is_not_null()
                           & id_hash("id").is_in(pl.Series(repeated).implode()))
              .group_by(id_hash("id")).agg(pl.col("id").n_unique().alias("_ids"))
              .filter(pl.col("_ids") > 1).collect(engine="streaming"))
    return shared.height > 0


def _exact_chains(table: pl.LazyFrame, repeated: Keys) -> Chains:
    """The walk on integer codes of the ids' text (when two ids share a hash)."""
    text = (table.filter(pl.col("id").is_not_null()).select("id", "parent")
            .collect(engine="streaming"))
    names = pl.concat([text["id"], text["parent"].drop_nulls()]).unique(maintain_order=True)
    codes = dict(zip(names.to_list(), range(names.len()), strict=True))

    def code(column: str) -> Keys:
        return text[column].replace_strict(codes, default=0, return_dtype=pl.UInt64).to_numpy()

    walked = _walk([code("id"), code("parent"), text["parent"].is_not_null().to_numpy()])
    ended = walked.kept
    def named(keys: Keys) -> pl.Series:
        return names.gather(keys.astype(np.int64))

    roots = pl.DataFrame({"id": named(walked.nodes[ended]), "root": named(walked.roots[ended])})
    return Chains(roots, named(walked.nodes[walked.looped]).alias("id"),
                  pl.Series("_hash", repeated, dtype=pl.UInt64))


def chain_roots(table: pl.LazyFrame) -> Chains:
    """Where each chain of parents in ``table`` (id, parent) ends, walked on id hashes."""
    keys = _hash_keys(table)
    rows = [keys["id"].to_numpy(), keys["parent"].to_numpy(), keys["has_parent"].to_numpy()]
    del keys  # the arrays are copies: hold one form at a time
    walked = _walk(rows)
    if _colliding(table, walked.repeated):
        return _exact_chains(table, walked.repeated)
    ended = walked.kept
    roots = pl.DataFrame({"id": walked.nodes[ended], "root": walked.roots[ended]},
                         schema={"id": pl.UInt64, "root": pl.UInt64})
    looped = pl.Series(walked.nodes[walked.looped], dtype=pl.UInt64)
    on_loops = (table.filter(pl.col("id").is_not_null() & id_hash("id").is_in(looped.implode()))
                .select(pl.col("id").unique()).collect(engine="streaming")["id"])
    return Chains(roots, on_loops, pl.Series("_hash", walked.repeated, dtype=pl.UInt64))


def cycle_members(table: pl.LazyFrame) -> pl.Series:
    """Ids whose chain of parents never ends: they lie on a loop or lead into one."""
    return chain_roots(table).cycle_ids
