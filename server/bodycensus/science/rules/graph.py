"""Parent-chain checks that need more than one join: loops in the chain of parents, and the root
each chain ends at (what keeps a system whole when a catalogue is split into partitions).

The chains are walked on 64-bit hashes of the ids in numpy, in passes that each hold little:
the repeated ids from one in-place sort of every id's hash (8 bytes a body, the peak, streamed
into one array), then only the ids that are some row's parent and have a parent are walked
(every id on a chain but its first is a parent: a tenth of the ids in a demo), following
integer positions; a leaf's chain
never ends when its parent's does not. Sorting every row's id, parent and position at once took
the process from 144 to 1,671 MiB at 30 million bodies (now 150 to 758 MiB, in 5 s, not 18 s);
polars' joins of the ids' text held 2.2 GiB at 10 million, its joins of the hashes 0.9 GiB.
Hashes stand for ids only where no two different ids share one (checked on the few repeated
hashes); otherwise the walk runs on integer codes of the ids' text, so loops are always found
exactly."""

from __future__ import annotations

from dataclasses import dataclass

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
    """The chains of a graph of integer keys: ``nodes`` (sorted distinct keys that have a
    parent), ``roots`` (the root key of each node's chain; meaningless where ``looped``),
    ``looped`` (the node's chain never ends) and ``edge`` (looped, or exactly ``MAX_DEPTH``
    hops long: a child of such a node is looped, one hop longer)."""

    nodes: Keys
    roots: Keys
    looped: npt.NDArray[np.bool_]
    edge: npt.NDArray[np.bool_]


def _walk(nodes: Keys, up: Keys) -> _Walked:
    """Walk every chain of parents (``nodes``: distinct keys that have a parent, in any order;
    ``up``: each one's parent) one hop per step over integer positions; chains that reach a
    root drop out, so the work shrinks geometrically. Chains still walking after ``MAX_DEPTH``
    hops lie on a loop or lead into one (self-parents are loops of length one). Hand-written:
    a fixed-point walk, which neither polars nor scipy offers, and polars' joins held several
    times the memory of these arrays."""
    order = np.argsort(nodes)
    nodes, up = nodes[order], up[order]
    del order
    at = np.empty(up.size, dtype=np.int64)
    by_parent = np.argsort(up)  # searching sorted keys: 10x faster than in row order
    at[by_parent] = np.minimum(np.searchsorted(nodes, up[by_parent]), max(nodes.size - 1, 0))
    del by_parent
    step = np.where(nodes[at] == up, at, -1)
    del at
    last = np.arange(nodes.size)  # the last node of each chain (its parent is no node)
    hops = np.zeros(nodes.size, dtype=np.uint8)  # steps until the chain ended (0: at once)
    walking = np.flatnonzero(step >= 0)
    current = step[walking]
    for hop in range(1, MAX_DEPTH + 1):
        if walking.size == 0:
            break
        ahead = step[current]
        done = ahead < 0
        last[walking[done]] = current[done]
        hops[walking[done]] = hop
        walking, current = walking[~done], ahead[~done]
    looped = np.zeros(nodes.size, dtype=np.bool_)
    looped[walking] = True
    return _Walked(nodes, up[last], looped, looped | (hops == MAX_DEPTH))


def _first_parented(ids: Keys, parents: Keys, has_parent: npt.NDArray[np.bool_]
                    ) -> tuple[Keys, Keys]:
    """The distinct ``ids`` whose first row has a parent, and that parent (one stable sort:
    an id's first row comes first)."""
    order = np.argsort(ids, kind="stable")
    ordered = ids[order]
    first = np.ones(ordered.size, dtype=np.bool_)
    first[1:] = ordered[1:] != ordered[:-1]
    keep = order[first]
    keep = keep[has_parent[keep]]
    return ids[keep], parents[keep]


def _repeated(table: pl.LazyFrame) -> Keys:
    """The hashes of ids on more than one row: every id's hash streamed batch by batch into one
    array, then sorted in place (8 bytes a body, the largest array the chains need; collecting
    the hashes and copying them into a writable array held them twice: 480 MB at 30M bodies)."""
    keys = np.empty(int(table.select(pl.col("id").count()).collect(engine="streaming").item()),
                    np.uint64)
    start = 0
    hashes = table.filter(pl.col("id").is_not_null()).select(id_hash("id"))
    for batch in hashes.collect_batches(engine="streaming"):
        keys[start:start + batch.height] = batch.to_series().to_numpy()
        start += batch.height
    keys.sort()
    same = keys[1:] == keys[:-1]
    return np.unique(keys[1:][same])


def _repeated_rows(table: pl.LazyFrame, repeated: Keys) -> pl.DataFrame:
    """``_at`` (position), ``_key`` (id hash) and ``id`` of the rows whose id hash is among
    ``repeated``, in row order (only those rows are read)."""
    if repeated.size == 0:
        return pl.DataFrame(schema={"_at": pl.UInt32, "_key": pl.UInt64, "id": pl.String})
    return (table.with_row_index("_at")
            .filter(pl.col("id").is_not_null()
                    & id_hash("id").is_in(pl.Series(repeated).implode()))
            .select("_at", id_hash("id").alias("_key"), "id").collect(engine="streaming")
            .sort("_at"))


def _later_rows(repeated_rows: pl.DataFrame) -> pl.Series:
    """Positions of the rows of a repeated id after its first one: the first row of an id
    says its parent, so the walk skips the others."""
    return repeated_rows.filter(~pl.col("_key").is_first_distinct())["_at"]


def _colliding(repeated_rows: pl.DataFrame) -> bool:
    """Whether two different ids share a hash among the repeated ones."""
    shared = repeated_rows.group_by("_key").agg(pl.col("id").n_unique().alias("_ids"))
    return bool((shared["_ids"] > 1).any())


def _parented_rows(table: pl.LazyFrame, later: pl.Series) -> pl.LazyFrame:
    """The rows that say an id's parent: with an id and a parent, the first row of their id;
    as ``_key`` (the id's hash) and ``_up`` (the parent's)."""
    rows = table.with_row_index("_at").filter(pl.col("id").is_not_null()
                                              & pl.col("parent").is_not_null())
    if later.len():
        rows = rows.filter(~pl.col("_at").is_in(later.implode()))
    return rows.select(id_hash("id").alias("_key"), id_hash("parent").alias("_up"))


def _distinct_parents(table: pl.LazyFrame) -> Keys:
    """The sorted hashes of every id some row (with an id) names as its parent."""
    parents = (table.filter(pl.col("id").is_not_null() & pl.col("parent").is_not_null())
               .select(id_hash("parent").unique()).collect(engine="streaming").to_series())
    return np.sort(parents.to_numpy())


def _parent_nodes(rows: pl.LazyFrame, parents: Keys) -> tuple[Keys, Keys]:
    """The ids among ``parents`` that have a parent, and that parent: only their chains need
    walking (every id on a chain but its first is some row's parent), a tenth of the ids in a
    demo. A streaming semi join on the parents (1.7 s at 30M bodies, +83 MB; a binary search
    batch by batch took 34 s)."""
    found = (rows.join(pl.LazyFrame({"_key": parents}, schema={"_key": pl.UInt64}),
                       on="_key", how="semi").collect(engine="streaming"))
    return found["_key"].to_numpy(), found["_up"].to_numpy()


def _children_of(rows: pl.LazyFrame, edge: Keys) -> Keys:
    """The ids whose parent is among ``edge`` (looped, or at the end of a ``MAX_DEPTH`` chain):
    their own chains never end either."""
    if edge.size == 0:
        return np.zeros(0, dtype=np.uint64)
    found = rows.filter(pl.col("_up").is_in(pl.Series(edge).implode())).select("_key")
    return found.collect(engine="streaming").to_series().to_numpy()


def _exact_chains(table: pl.LazyFrame, repeated: Keys) -> Chains:
    """The walk on integer codes of the ids' text (when two ids share a hash): every id whose
    first row has a parent is walked, in memory (too rare to plan memory for)."""
    text = (table.filter(pl.col("id").is_not_null()).select("id", "parent")
            .collect(engine="streaming"))
    names = pl.concat([text["id"], text["parent"].drop_nulls()]).unique(maintain_order=True)
    codes = dict(zip(names.to_list(), range(names.len()), strict=True))

    def code(column: str) -> Keys:
        return text[column].replace_strict(codes, default=0, return_dtype=pl.UInt64).to_numpy()

    has_parent = text["parent"].is_not_null().to_numpy()
    walked = _walk(*_first_parented(code("id"), code("parent"), has_parent))
    parented = np.isin(walked.nodes, code("parent")[has_parent])
    ended = parented & ~walked.looped

    def named(keys: Keys) -> pl.Series:
        return names.gather(keys.astype(np.int64))

    roots = pl.DataFrame({"id": named(walked.nodes[ended]), "root": named(walked.roots[ended])})
    return Chains(roots, named(walked.nodes[walked.looped]).alias("id"),
                  pl.Series("_hash", repeated, dtype=pl.UInt64))


def chain_roots(table: pl.LazyFrame) -> Chains:
    """Where each chain of parents in ``table`` (id, parent) ends, walked on id hashes: the
    repeated ids from one sort of the ids' hashes, then only the ids that are some row's parent
    are walked (memory follows them; the ids below them, leaves, are found by their parent)."""
    repeated = _repeated(table)
    repeated_rows = _repeated_rows(table, repeated)
    if _colliding(repeated_rows):
        return _exact_chains(table, repeated)
    rows = _parented_rows(table, _later_rows(repeated_rows))
    walked = _walk(*_parent_nodes(rows, _distinct_parents(table)))
    ended = ~walked.looped  # every walked node is some row's parent
    roots = pl.DataFrame({"id": walked.nodes[ended], "root": walked.roots[ended]},
                         schema={"id": pl.UInt64, "root": pl.UInt64})
    looped = pl.Series(np.concatenate([walked.nodes[walked.looped],
                                       _children_of(rows, walked.nodes[walked.edge])]),
                       dtype=pl.UInt64)
    on_loops = (table.filter(pl.col("id").is_not_null() & id_hash("id").is_in(looped.implode()))
                .select(pl.col("id").unique()).collect(engine="streaming")["id"])
    return Chains(roots, on_loops, pl.Series("_hash", repeated, dtype=pl.UInt64))


def cycle_members(table: pl.LazyFrame) -> pl.Series:
    """Ids whose chain of parents never ends: they lie on a loop or lead into one."""
    return chain_roots(table).cycle_ids
