"""Lazy histogram helpers: equal-width edges, bin indices and dense counts."""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest

from bodycensus.diagrams import binning


def test_edges_are_equal_and_cover_the_range() -> None:
    edges = binning.edges(0.0, 10.0, 5)
    assert edges == pytest.approx([0, 2, 4, 6, 8, 10])
    assert binning.edges(None, 1.0, 5) == [] and binning.edges(0.0, float("nan"), 5) == []
    assert binning.edges(3.0, 3.0, 2) == pytest.approx([2.5, 3.0, 3.5])  # one value, one bar


def test_counts_match_numpy_histogram() -> None:
    # numpy.histogram is the reference: equal bins, the top edge in the last bin
    values = np.random.default_rng(1).uniform(0.0, 10.0, 1000)
    edges = binning.edges(0.0, 10.0, 7)
    frame = binning.counts_plan(pl.LazyFrame({"v": values}), pl.col("v"), edges).collect()
    expected, _ = np.histogram(values, bins=edges)
    assert binning.dense_counts(frame, 7) == expected.tolist()


def test_values_beyond_the_edges_fall_in_the_end_bins() -> None:
    frame = pl.DataFrame({"v": [-5.0, 0.5, 99.0, None]})
    index = frame.select(binning.bin_index(pl.col("v"), [0.0, 1.0, 2.0]))["v"].to_list()
    assert index == [0, 0, 1, None]


def test_grouped_and_two_dimensional_counts() -> None:
    lf = pl.LazyFrame({"g": ["a", "a", "b"], "x": [0.1, 0.9, 0.1], "y": [0.1, 0.1, 0.9]})
    by = binning.dense_counts_by(binning.counts_plan(lf, pl.col("x"), [0, 0.5, 1], "g")
                                 .collect(), "g", 2)
    assert by == {"a": [1, 1], "b": [1, 0]}
    plan = binning.counts_2d_plan(lf, pl.col("x"), [0, 0.5, 1], pl.col("y"), [0, 0.5, 1])
    assert binning.dense_matrix(plan.collect(), 2, 2) == [[1, 1], [1, 0]]  # rows are y


def test_log10_of_positive_values_only() -> None:
    out = pl.DataFrame({"v": [100.0, 0.0, -1.0, float("inf")]}).select(
        binning.log10_positive(pl.col("v")))["v"].to_list()
    assert out == [2.0, None, None, None]
