"""A check split into partitions of whole systems: catalogue-wide facts first, then one pure
function per partition that every engine (local, distributed) calls.

A body's system here is the root of its chain of parents (a body without a parent is its own
root; a parent id no row carries is the root of its children), so a parent, its grandparent, its
siblings and its rings always share the body's partition; ids on a loop of parents all go to one
partition. The bucket of a system is a hash of its root modulo the number of partitions.
What a partition cannot see on its own (label -> family, duplicate ids, each label's median and
MAD, loops) is computed by streaming passes over the whole catalogue into ``CatalogueFacts``, a
few small tables handed to every partition.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import cache

import numpy as np
import polars as pl

from bodycensus.science.families import FAMILIES, family_mapping
from bodycensus.science.rules import all_rules
from bodycensus.science.rules.base import Rule, coverage_counts, evaluate, flagged
from bodycensus.science.rules.context import ContextFacts, context_facts, derive
from bodycensus.science.rules.graph import (
    HASH_SEED,
    Chains,
    chain_roots,
    id_hash,
)
from bodycensus.science.rules.orbit import OrbitSettings

PARTITION_ROWS = 125_000  # bodies per partition the local engine aims at (memory follows it)
PART = "_part"  # the partition number column of the partitioned normalised table
SEARCH_BATCH = 1 << 20  # rows whose system is looked up at a time (``partition_numbers``)
_LOOP_ROOT = "\x00loop"  # the one system of every id whose chain of parents never ends


@dataclass(frozen=True)
class CatalogueFacts:
    """Everything a partition needs from the whole catalogue (each table small: labels,
    duplicated ids, ids on loops), and the settings every partition is checked with."""

    families: dict[str, str]  # label -> family, as guessed or chosen
    family_overrides: dict[str, str]
    context: ContextFacts
    orbit_settings: OrbitSettings = field(default_factory=OrbitSettings)

    def rules(self) -> tuple[Rule, ...]:
        """The rules every partition runs, in the registry's order (built once per settings:
        building their expressions took 28 ms, a tenth of a small partition's fixed cost)."""
        return _rules(self.orbit_settings)


@cache
def _rules(settings: OrbitSettings) -> tuple[Rule, ...]:
    """``all_rules`` for ``settings`` (frozen, so the same settings give the same rules)."""
    return all_rules(settings)


SHOWN_WORKING = ("_row", "_bad")  # underscore columns the pages read: file row, ingest flag


def stored_columns(columns: Sequence[str]) -> list[str]:
    """The columns of the bodies a run stores: every column but the working ones only the
    rules read (underscore-prefixed: band edges, scores, masses in SI without the bad ones...);
    no page, diagram, aggregate, comparison or triage reads those (their 33 of 116 columns
    took a fifth of the write and of the disk)."""
    return [c for c in columns if not c.startswith("_") or c in SHOWN_WORKING]


@dataclass(frozen=True)
class PartitionResult:
    """What one partition gives: its bodies with every derived column to store (in file order,
    ``stored_columns``), the rows some rule fires on (``base.flagged``: the columns the rules
    read; ``judge`` turns them into findings), and rule coverage counts that add up across
    partitions (``coverage_counts``)."""

    bodies: pl.DataFrame
    flagged: pl.DataFrame
    coverage: pl.DataFrame


def fill_families(table: pl.LazyFrame, families: Mapping[str, str],
                  overrides: Mapping[str, str]) -> pl.LazyFrame:
    """Fill ``family`` from each label: an explicit override wins, then a valid family given in
    the file, then the guess ("unknown" for a label without one). Applying it twice changes
    nothing. The label -> family tables are joined on (a small build side, so it streams:
    ``replace_strict`` held the whole column, 0.6 GiB at 10 million bodies, polars 2.1)."""
    labels = sorted(set(families) | set(overrides))
    mapping = pl.LazyFrame({
        "label": labels,
        "_guessed": [families.get(label) for label in labels],
        "_forced": [overrides.get(label) for label in labels],
    }, schema={"label": pl.String, "_guessed": pl.String, "_forced": pl.String})
    given = pl.when(pl.col("family").is_in(FAMILIES)).then(pl.col("family"))
    guessed = pl.col("_guessed").fill_null("unknown")
    return (table.join(mapping, on="label", how="left", maintain_order="left")
            .with_columns(pl.coalesce("_forced", given, guessed).alias("family"))
            .drop("_guessed", "_forced"))


def label_families(table: pl.LazyFrame, overrides: Mapping[str, str]) -> dict[str, str]:
    """Label -> family for every label of the catalogue (one streaming pass for the labels)."""
    labels = (table.select(pl.col("label").unique()).collect(engine="streaming")["label"]
              .drop_nulls().to_list())
    return family_mapping(sorted(labels), dict(overrides))


def catalogue_facts(table: pl.LazyFrame, overrides: Mapping[str, str] = {},
                    orbit_settings: OrbitSettings | None = None) -> tuple[CatalogueFacts, Chains]:
    """The facts of the whole catalogue ``table`` (normalised, lazy), and where each chain of
    parents ends (the partitioning needs it; the partitions do not)."""
    families = label_families(table, overrides)
    filled = fill_families(table, families, overrides)
    chains = chain_roots(table)  # ids and parents only: no families needed
    context = context_facts(filled, chains)
    facts = CatalogueFacts(families, dict(overrides), context,
                           orbit_settings or OrbitSettings())
    return facts, chains


def partition_count(rows: int, per_partition: int = PARTITION_ROWS) -> int:
    """How many partitions a catalogue of ``rows`` bodies is split into."""
    return max(1, math.ceil(rows / per_partition))


def _own_key() -> pl.Expr:
    """The key of a body without a parent, its own system: its id, or "row N" without one."""
    return pl.coalesce(pl.col("id"), pl.concat_str([pl.lit("row "), pl.col("_row")]))


def with_partition(table: pl.LazyFrame, chains: Chains, partitions: int,
                   ordered: bool = False) -> pl.LazyFrame:
    """``table`` with ``_part``: the bucket (0 .. partitions-1) of each body's system, a hash
    of its system's key: its own id (or "row N") without a parent, one fixed key for every body
    whose parent is on a loop, else the root its parent's chain ends at (the parent itself
    when no row carries that id or it has no parent). ``ordered`` keeps the table's row order."""
    def bucket(hashed: pl.Expr) -> pl.Expr:
        return (hashed % partitions).cast(pl.UInt32)

    own = _own_key()
    looped = pl.col("parent").is_in(chains.cycle_ids.cast(pl.String).implode())
    part = (pl.when(pl.col("parent").is_null()).then(bucket(own.hash(seed=HASH_SEED)))
            .when(looped).then(bucket(pl.lit(_LOOP_ROOT).hash(seed=HASH_SEED)))
            .otherwise(pl.coalesce(pl.col("_root_part"), bucket(id_hash("parent")))))
    # the big catalogue-wide table the join builds on: an id (its hash) and a bucket per body
    key = id_hash("parent") if chains.hashed else pl.col("parent")
    root = pl.col("root") if chains.hashed else id_hash("root")
    roots = chains.roots.lazy().select(pl.col("id").alias("_parent_key"),
                                       bucket(root).alias("_root_part"))
    return (table.with_columns(key.alias("_parent_key"))
            .join(roots, on="_parent_key", how="left",
                  maintain_order="left" if ordered else "none")
            .with_columns(part.alias(PART)).drop("_root_part", "_parent_key"))


def partition_numbers(table: pl.LazyFrame, chains: Chains, partitions: int) -> pl.Series:
    """Each row's partition number (``with_partition``'s), in the table's own row order: 4 bytes
    a body, so the wide rows can then be split by position, batch by batch. The roots are
    looked up by a binary search of each batch's parent hashes in ``chains.roots`` (sorted by
    id hash): polars' join of the narrow table on them peaked at 2.1 GB at 30M bodies."""
    narrow = table.select("_row", "id", "parent")
    if not chains.hashed:  # two ids share a hash (too rare to plan for): the join on the text
        return with_partition(narrow, chains, partitions, ordered=True).select(PART).collect(
            )[PART]
    looped = pl.col("parent").is_in(chains.cycle_ids.cast(pl.String).implode())
    own = (pl.when(pl.col("parent").is_null()).then(_own_key().hash(seed=HASH_SEED))
           .when(looped).then(pl.lit(_LOOP_ROOT).hash(seed=HASH_SEED)))
    keys = narrow.select(own.alias("_own"), id_hash("parent").alias("_parent_key"))
    ids, roots = chains.roots["id"].to_numpy(), chains.roots["root"].to_numpy()
    # filled in place: a list of batches then joined held the numbers twice
    numbers = np.empty(int(narrow.select(pl.len()).collect().item()), dtype=np.uint32)
    start = 0
    for batch in keys.collect_batches(chunk_size=SEARCH_BATCH):
        system = _system_keys(batch["_parent_key"].to_numpy(), ids, roots)
        own_key = batch["_own"]  # where set: a system without a parent, or the loops' one
        system[own_key.is_not_null().to_numpy()] = own_key.drop_nulls().to_numpy()
        numbers[start:start + system.size] = system % np.uint64(partitions)
        start += system.size
    return pl.Series(PART, numbers[:start], dtype=pl.UInt32)


def _system_keys(parents: np.ndarray, ids: np.ndarray, roots: np.ndarray) -> np.ndarray:
    """The hash of the root each parent's chain ends at: ``roots`` where the parent is among
    the sorted ``ids``, else the parent itself (it has no parent, or no row carries it)."""
    system = parents.copy()
    if ids.size:
        at = np.minimum(np.searchsorted(ids, parents), ids.size - 1)
        found = ids[at] == parents
        system[found] = roots[at[found]]
    return system


def check_partition(frame: pl.DataFrame, facts: CatalogueFacts) -> PartitionResult:
    """Check one partition: ``frame`` holds whole systems of the normalised table (any row
    order; ``_part`` may be present). Pure: the same frame and facts give the same result."""
    frame = frame.drop(PART, strict=False)
    if not frame["_row"].is_sorted():  # the split writes each partition in row order already
        frame = frame.sort("_row")
    table = fill_families(frame.lazy(), facts.families, facts.family_overrides)
    # One partition is in memory already; the streaming engine panicked (polars 2.1, "i <
    # self.len()") on the rules' pl.format messages over an in-memory frame.
    bodies = derive(table, facts.context).collect(engine="in-memory")
    rules = facts.rules()
    return PartitionResult(bodies.select(stored_columns(bodies.columns)), flagged(bodies, rules),
                           coverage_counts(bodies.lazy(), rules))


def judge(parts: Sequence[pl.DataFrame | pl.LazyFrame], rules: Sequence[Rule]) -> pl.LazyFrame:
    """The findings of the flagged rows of several partitions (``PartitionResult.flagged``, in
    partition order), as one plan: planning ``evaluate``'s 38 branches took 0.19 s of CPU
    whatever the rows (ten or 3,000), a sixth of the check of a partition of 125,000 bodies
    when done per partition (polars 2.1). Each rule's findings come in the parts' order
    (``merge_findings`` puts them in file order)."""
    if not parts:
        return evaluate(pl.LazyFrame(), [])
    return evaluate(pl.concat([part.lazy() for part in parts], how="vertical_relaxed"), rules)


def merge_findings(parts: Sequence[pl.DataFrame | pl.LazyFrame],
                   rules: Sequence[Rule]) -> pl.DataFrame:
    """Findings of several parts as one frame (``merged_findings``, collected)."""
    return merged_findings(parts, rules).collect()


def merged_findings(parts: Sequence[pl.DataFrame | pl.LazyFrame],
                    rules: Sequence[Rule]) -> pl.LazyFrame:
    """Findings of several parts (``judge``'s, of batches of partitions) as one plan, rule by
    rule in the registry's order and each rule's findings in file order (what one pass over the
    whole table gives). The parts may be lazy (the local engine's are scans of the files each
    batch's findings went to)."""
    if not parts:
        return evaluate(pl.LazyFrame(), [])
    order = {rule.id: i for i, rule in enumerate(rules)}
    merged = pl.concat([part.lazy() for part in parts], how="vertical")
    rank = pl.col("rule").replace_strict(order, return_dtype=pl.Int64)
    return merged.sort(rank, "_row", maintain_order=True)
