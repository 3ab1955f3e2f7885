"""Loops in the chain of parents: which ids never reach a root."""

from __future__ import annotations

import polars as pl
from polars.testing import assert_frame_equal

from bodycensus.science.rules.graph import (
    HASH_SEED,
    MAX_DEPTH,
    _exact_chains,
    chain_roots,
    cycle_members,
    id_hash,
)


def _members(pairs: list[tuple[str | None, str | None]]) -> list[str]:
    table = pl.LazyFrame(pairs, schema={"id": pl.String, "parent": pl.String}, orient="row")
    return sorted(cycle_members(table).to_list())


def test_a_tree_has_no_loop() -> None:
    assert _members([("sun", None), ("earth", "sun"), ("moon", "earth"), ("mars", "sun"),
                     ("phobos", "mars"), ("rogue", "nowhere")]) == []


def test_self_parents_and_loops_of_two_and_three() -> None:
    assert _members([("a", "a"), ("b", "c"), ("c", "b"), ("x", "y"), ("y", "z"), ("z", "x"),
                     ("root", None), ("leaf", "root")]) == ["a", "b", "c", "x", "y", "z"]


def test_chains_that_lead_into_a_loop_never_end_either() -> None:
    assert _members([("p", "q"), ("q", "p"), ("moon", "p"), ("submoon", "moon")]) == [
        "moon", "p", "q", "submoon"]


def test_a_long_chain_that_ends_is_no_loop() -> None:
    chain = [(f"b{i}", f"b{i - 1}" if i else None) for i in range(40)]
    assert _members(chain) == []


def test_the_first_row_of_a_duplicated_id_decides_its_parent() -> None:
    # a's first row points at the root, so the later row's self-loop is not followed
    assert _members([("root", None), ("a", "root"), ("a", "a")]) == []
    assert _members([("a", "a"), ("a", "root"), ("root", None)]) == ["a"]


def test_rows_without_id_or_parent_are_ignored() -> None:
    assert _members([(None, "a"), ("a", None), (None, None)]) == []
    empty = pl.LazyFrame(schema={"id": pl.String, "parent": pl.String})
    assert cycle_members(empty).to_list() == []


def test_the_walk_on_the_ids_text_finds_the_chains_the_walk_on_hashes_finds() -> None:
    # the text walk runs when two ids share a 64-bit hash (too rare to plant): same roots and
    # loops, the first row of a duplicated id deciding its parent in both
    table = pl.LazyFrame(
        [("sun", None), ("earth", "sun"), ("moon", "earth"), ("moon", "mars"), ("a", "b"),
         ("b", "a"), ("c", "a"), ("o1", "ghost"), ("o2", "o1"), (None, "sun"), ("lone", None),
         *[(f"b{i}", f"b{i - 1}" if i else "sun") for i in range(40)]],
        schema={"id": pl.String, "parent": pl.String}, orient="row")
    hashed = chain_roots(table)
    text = _exact_chains(table, hashed.repeated.to_numpy())
    assert hashed.hashed and not text.hashed
    assert hashed.repeated.to_list() == [pl.select(pl.lit("moon").hash(seed=HASH_SEED)).item()]
    named = text.roots.sort("id")
    # roots are kept for the ids that are some row's parent: what a body's bucket is looked up by
    assert named.filter(pl.col("id") == "earth")["root"].item() == "sun"
    assert named.filter(pl.col("id") == "o1")["root"].item() == "ghost"
    assert named.filter(pl.col("id").is_in(["moon", "o2", "b39"])).height == 0
    assert_frame_equal(hashed.roots.sort("id"), named.select(
        id_hash("id").alias("id"), id_hash("root").alias("root")).sort("id"))
    assert sorted(hashed.cycle_ids.to_list()) == sorted(text.cycle_ids.to_list()) == [
        "a", "b", "c"]


def test_a_leaf_one_hop_beyond_the_longest_walked_chain_is_walked_like_the_text_walk() -> None:
    # only ids that are some row's parent are walked on hashes; a leaf is judged by its
    # parent's chain: b66 lies MAX_DEPTH + 1 hops from its root, as far as either walk follows
    # a chain, so both call it looped (the text walk follows every id, leaves included)
    chain = [(f"b{i}", f"b{i - 1}" if i else None) for i in range(MAX_DEPTH + 3)]
    table = pl.LazyFrame(chain + [("b66", "b0"), ("x", "b65")],
                         schema={"id": pl.String, "parent": pl.String}, orient="row")
    hashed = chain_roots(table)
    text = _exact_chains(table, hashed.repeated.to_numpy())
    assert sorted(hashed.cycle_ids.to_list()) == sorted(text.cycle_ids.to_list()) == ["b66", "x"]
    assert_frame_equal(hashed.roots.sort("id"), text.roots.select(
        id_hash("id").alias("id"), id_hash("root").alias("root")).sort("id"))
