"""The artefact detector's inputs in bounded memory: group columns as small integer codes and one
field at a time as a float64 array, each streamed batch by batch into an array made once.

The detector of main 52004af held 1.0 GiB at 10M bodies here (the stage alone): the group columns
collected as strings, a list of rows per group, each field read whole and gathered again per
group column; a 30M check peaked at 6.85 GB in that stage. Hand-written
because polars has no streaming gather into numpy; numpy does the per-group work.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import polars as pl

ORDER_CHUNK = 1 << 20  # rows whose codes are sorted at a time while grouping them (``_grouped``)


@dataclass(frozen=True)
class GroupCodes:
    """One group column's rows by group: the names of the groups big enough to test (sorted);
    ``order`` holds every row of group 0, then of group 1, ... (each in table order), and last
    the rows in no such group; ``starts`` where each begins. Found once from small integer codes
    (the codes are dropped then: a byte or two a row), where finding each group's rows again
    for every field took a quarter of the detector's time at 10M bodies."""

    scope: str
    names: list[str]
    order: np.ndarray
    starts: np.ndarray

    @classmethod
    def of(cls, scope: str, names: list[str], codes: np.ndarray) -> GroupCodes:
        """The group column ``scope`` from each row's code (its index into ``names``,
        ``len(names)`` for a row in no group), its rows grouped (``_grouped``)."""
        return cls(scope, names, *_grouped(codes, len(names) + 1))

    def rows(self, index: int) -> np.ndarray:
        """The rows of group ``index``, in table order."""
        return self.order[self.starts[index]:self.starts[index + 1]]


def _grouped(codes: np.ndarray, n_codes: int) -> tuple[np.ndarray, np.ndarray]:
    """Row numbers grouped by code (table order within a group) and each group's start: a
    counting sort, chunk by chunk, so memory holds 4 bytes a row and one chunk's 8-byte argsort
    (``np.argsort`` of the whole column would hold 8 bytes a row: 240 MB at 30M bodies)."""
    counts = np.bincount(codes, minlength=n_codes)
    starts = np.r_[0, np.cumsum(counts)]
    filled = starts[:-1].copy()
    order = np.empty(codes.size, np.uint32 if codes.size < 1 << 32 else np.uint64)
    for begin in range(0, codes.size, ORDER_CHUNK):
        chunk = codes[begin:begin + ORDER_CHUNK]
        by_code = np.argsort(chunk, kind="stable")
        edges = np.r_[0, np.cumsum(np.bincount(chunk, minlength=n_codes))]
        for code in np.flatnonzero(np.diff(edges)):
            rows = by_code[edges[code]:edges[code + 1]] + begin
            order[filled[code]:filled[code] + rows.size] = rows
            filled[code] += rows.size
    return order, starts


def _code_type(n_names: int) -> type[np.unsignedinteger]:
    """The narrowest unsigned integer that holds every code and 'no group'."""
    return next(t for t in (np.uint8, np.uint16, np.uint32) if n_names < np.iinfo(t).max)


def _fill(lazy: pl.LazyFrame, exprs: Sequence[pl.Expr], out: Sequence[np.ndarray],
          lookups: Sequence[np.ndarray] | None = None) -> None:
    """Stream the columns ``exprs`` make into the preallocated arrays ``out`` (one each), batch
    by batch, so memory holds the arrays and one batch, never a second copy of a column; with
    ``lookups``, each column holds indices and its array gets ``lookup[index]``."""
    start = 0
    for batch in lazy.select(exprs).collect_batches(engine="streaming"):
        stop = start + batch.height
        for i, (column, array) in enumerate(zip(batch.iter_columns(), out, strict=True)):
            array[start:stop] = (column.to_numpy() if lookups is None
                                 else lookups[i][column.to_numpy()])
        start = stop


def group_codes(lazy: pl.LazyFrame, scopes: Sequence[str], n_rows: int, min_count: int
                 ) -> list[GroupCodes]:
    """Each group column's big groups (at least ``min_count`` rows, nulls in none) and codes:
    one streaming count per column, then one streaming pass over every column, each value cast
    to an enum of the column's names (elementwise, so it streams: ``replace_strict`` held the
    whole string columns, 0.9 GiB at 10M rows) and its index looked up in a small table."""
    names: list[list[str]] = []
    exprs: list[pl.Expr] = []
    arrays: list[np.ndarray] = []
    lookups: list[np.ndarray] = []
    for scope in scopes:
        value = pl.col(scope).cast(pl.String)
        sizes = (lazy.select(value).drop_nulls().group_by(scope).len().sort(scope)
                 .collect(engine="streaming"))
        big = (sizes["len"] >= min_count).to_numpy()
        names.append(sizes.filter(pl.Series(big))[scope].to_list())
        numpy_type = _code_type(len(names[-1]))
        # every name's code (a small group's is len(big names): no group), then null's
        lookup = np.where(big, np.cumsum(big) - 1, len(names[-1])).astype(numpy_type)
        lookups.append(np.r_[lookup, numpy_type(len(names[-1]))])
        exprs.append(value.cast(pl.Enum(sizes[scope])).to_physical().cast(pl.Int64)
                     .fill_null(len(sizes)).alias(f"_code{len(exprs)}"))
        arrays.append(np.empty(n_rows, numpy_type))
    _fill(lazy, exprs, arrays, lookups)
    grouped = []
    for scope, scope_names in zip(scopes, names, strict=True):
        grouped.append(GroupCodes.of(scope, scope_names, arrays.pop(0)))  # codes freed
    return grouped


def gather(values: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """``values[rows]``, ``ORDER_CHUNK`` rows at a time: numpy turns 4-byte row numbers into an
    8-byte index before a gather, a copy as long as the group (144 MB for a group of 18M)."""
    out = np.empty(rows.size, values.dtype)
    for begin in range(0, rows.size, ORDER_CHUNK):
        out[begin:begin + ORDER_CHUNK] = values[rows[begin:begin + ORDER_CHUNK]]
    return out


def read_field(lazy: pl.LazyFrame, field: str, n_rows: int) -> np.ndarray:
    """One field as float64 (null as NaN), streamed into one array."""
    values = np.empty(n_rows, np.float64)
    _fill(lazy, [pl.col(field).cast(pl.Float64)], [values])
    return values
