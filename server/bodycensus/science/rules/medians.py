"""Exact medians of groups in bounded memory: two streaming passes of binned counts.

A median needs every value of its group at once; at ten million bodies polars' group-by median
held 1.4 GiB. Here the first pass counts the values per group and bin (a bin is 2**-10 wide on
the values' scale, so the counts are a small table), which says in which bin the middle rank
lies and where in it; the second pass reads only the values in those bins. The result equals
polars' ``median()`` (the two middle values interpolated) exactly: the same values are picked.
Hand-written because polars, scipy and Dask offer no exact median without holding the groups.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import polars as pl

VALUE = "_value"  # the column whose median is taken
_BIN = "_bin"
_BIN_WIDTH = 2.0**-10  # on log10 values: 1e-3 of a decade, so few values share a bin
_EDGE = 2.0**62  # bins beyond (infinite values) are clipped here


def _bin() -> pl.Expr:
    """Each value's bin, in the values' order (NaN, which sorts last, in the last bin)."""
    value = pl.col(VALUE).fill_nan(float("inf")) / _BIN_WIDTH
    return value.clip(-_EDGE, _EDGE).floor().cast(pl.Int64).alias(_BIN)


def _ranks(counts: pl.DataFrame, keys: Sequence[str]) -> pl.DataFrame:
    """The bin and the place within it of each group's two middle ranks (one and the same
    rank for an odd count): keys, ``_which`` (0 lower, 1 upper), ``_bin``, ``_offset``."""
    sized = counts.sort(*keys, _BIN).with_columns(
        pl.col("_len").cum_sum().over(keys).alias("_upto"),
        pl.col("_len").sum().over(keys).alias("_n"))
    wanted = []
    for which, rank in enumerate(((pl.col("_n") - 1) // 2, pl.col("_n") // 2)):
        start = pl.col("_upto") - pl.col("_len")
        wanted.append(sized.filter((start <= rank) & (rank < pl.col("_upto"))).select(
            *keys, pl.lit(which, pl.UInt8).alias("_which"), _BIN,
            (rank - start).alias("_offset")))
    return pl.concat(wanted)


def binned_medians(values: Callable[[], pl.LazyFrame], keys: Sequence[str]) -> pl.DataFrame:
    """keys, ``median``: the exact median of ``VALUE`` in each group of ``keys`` (groups with
    no non-null value absent). ``values()`` gives the same lazy frame each time it is called
    (keys and ``VALUE``); it is read twice, streaming."""
    present = pl.col(VALUE).is_not_null()
    counts = (values().filter(present).group_by(*keys, _bin()).agg(pl.len().alias("_len"))
              .collect(engine="streaming"))
    ranks = _ranks(counts, keys)
    bins = ranks.select(*keys, _BIN).unique()
    picked = (values().filter(present).with_columns(_bin())
              .join(bins.lazy(), on=[*keys, _BIN], how="semi")
              .collect(engine="streaming"))
    ordered = picked.sort(*keys, _BIN, VALUE).with_columns(
        pl.int_range(pl.len()).over(*keys, _BIN).alias("_offset"))
    middle = ranks.join(ordered, on=[*keys, _BIN, "_offset"], how="left").pivot(
        "_which", index=list(keys), values=VALUE, sort_columns=True)
    lower, upper = pl.col("0"), pl.col("1")
    return middle.select(*keys, (lower + (upper - lower) * 0.5).alias("median"))
