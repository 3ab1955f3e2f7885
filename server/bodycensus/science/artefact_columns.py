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


@dataclass(frozen=True)
class GroupCodes:
    """One group column as small integers: the names of the groups big enough to test (sorted)
    and each row's index into them (``len(names)`` for a row in no such group). A few bytes a
    row, where the names as strings and per-group row lists took tens."""

    scope: str
    names: list[str]
    codes: np.ndarray

    def rows(self, index: int) -> np.ndarray:
        """The rows of group ``index``, in table order."""
        return np.flatnonzero(self.codes == index)


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
    return [GroupCodes(*group) for group in zip(scopes, names, arrays, strict=True)]


def read_field(lazy: pl.LazyFrame, field: str, n_rows: int) -> np.ndarray:
    """One field as float64 (null as NaN), streamed into one array."""
    values = np.empty(n_rows, np.float64)
    _fill(lazy, [pl.col(field).cast(pl.Float64)], [values])
    return values
