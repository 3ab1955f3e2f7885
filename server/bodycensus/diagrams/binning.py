"""Lazy histogram helpers: value ranges, fixed bin edges and binned counts as polars plans.

Why: the dashboard draws millions of bodies from counts on a few dozen bins; these helpers build
the plans (``pl.LazyFrame``) so the caller can run them all in one ``pl.collect_all`` pass.
"""

from __future__ import annotations

import math

import polars as pl


def log10_positive(expr: pl.Expr) -> pl.Expr:
    """log10 of the finite positive values of ``expr``; null elsewhere."""
    return pl.when(expr.is_finite() & (expr > 0)).then(expr.log10()).otherwise(None)


def finite(expr: pl.Expr) -> pl.Expr:
    """``expr`` where it is finite; null elsewhere."""
    return pl.when(expr.is_finite()).then(expr).otherwise(None)


def range_exprs(name: str, expr: pl.Expr) -> list[pl.Expr]:
    """Two aggregate expressions, ``<name>__lo`` and ``<name>__hi``, for one value range."""
    return [expr.min().alias(f"{name}__lo"), expr.max().alias(f"{name}__hi")]


def edges(low: float | None, high: float | None, bins: int) -> list[float]:
    """``bins + 1`` equal-width edges from ``low`` to ``high``; [] when there is no data.

    A single value gets a unit-wide window so it still shows as one bar.
    """
    if low is None or high is None or not (math.isfinite(low) and math.isfinite(high)):
        return []
    if high - low < 1e-9:
        low, high = low - 0.5, high + 0.5
    width = (high - low) / bins
    return [low + i * width for i in range(bins)] + [high]


def bin_index(expr: pl.Expr, bin_edges: list[float]) -> pl.Expr:
    """The 0-based bin of each value on equal-width ``bin_edges`` (the top edge falls in the last).
    """
    bins = len(bin_edges) - 1
    width = (bin_edges[-1] - bin_edges[0]) / bins
    index = ((expr - bin_edges[0]) / width).floor().cast(pl.Int64)
    return index.clip(0, bins - 1)


def counts_plan(lf: pl.LazyFrame, value: pl.Expr, bin_edges: list[float],
                group: str | None = None) -> pl.LazyFrame:
    """Plan of (``group``,) ``bin``, ``n``: how many values fall in each bin (per group)."""
    keys = [pl.col(group)] if group else []
    return (
        lf.select(*keys, bin_index(value, bin_edges).alias("bin"))
        .drop_nulls()
        .group_by(*([group] if group else []), "bin")
        .agg(pl.len().alias("n"))
    )


def counts_2d_plan(lf: pl.LazyFrame, x: pl.Expr, x_edges: list[float], y: pl.Expr,
                   y_edges: list[float]) -> pl.LazyFrame:
    """Plan of ``xbin``, ``ybin``, ``n``: a 2-D histogram on equal-width edges."""
    return (
        lf.select(bin_index(x, x_edges).alias("xbin"), bin_index(y, y_edges).alias("ybin"))
        .drop_nulls()
        .group_by("xbin", "ybin")
        .agg(pl.len().alias("n"))
    )


def dense_counts(frame: pl.DataFrame, bins: int) -> list[int]:
    """A ``bins``-long list of counts from a collected ``counts_plan`` without groups."""
    out = [0] * bins
    for index, n in zip(frame["bin"].to_list(), frame["n"].to_list(), strict=True):
        out[index] = n
    return out


def dense_counts_by(frame: pl.DataFrame, group: str, bins: int) -> dict[str, list[int]]:
    """Per group, a ``bins``-long list of counts from a collected grouped ``counts_plan``."""
    out: dict[str, list[int]] = {}
    for key, index, n in frame.select(group, "bin", "n").iter_rows():
        out.setdefault(key, [0] * bins)[index] = n
    return out


def dense_matrix(frame: pl.DataFrame, x_bins: int, y_bins: int) -> list[list[int]]:
    """A ``y_bins`` x ``x_bins`` matrix (rows are y, as plotly heatmaps want) from a 2-D plan."""
    out = [[0] * x_bins for _ in range(y_bins)]
    for x, y, n in frame.select("xbin", "ybin", "n").iter_rows():
        out[y][x] = n
    return out
