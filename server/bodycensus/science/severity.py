"""The severities of a finding, most serious first, defined once: their order, ranks and the
polars expressions that sort and name them.

``error`` (the data is broken), ``impossible`` (physics rules it out), ``unstable`` (cannot
last), ``suspect`` (statistically odd or inconsistent), ``note`` (notable and fine). Rules,
engines, queries, diagrams and the command line all read the order from here.
"""

from __future__ import annotations

from typing import Final

import polars as pl

SEVERITIES: Final[tuple[str, ...]] = ("error", "impossible", "unstable", "suspect", "note")
SEVERITY_RANK: Final[dict[str, int]] = {name: rank for rank, name in enumerate(SEVERITIES)}
UNRANKED: Final[int] = len(SEVERITIES)  # the rank of anything else: after every severity


def rank(severity: str | None) -> int:
    """0 for ``error`` ... 4 for ``note``; ``UNRANKED`` for anything that is not a severity."""
    return SEVERITY_RANK.get(severity, UNRANKED) if severity is not None else UNRANKED


def at_or_above(severity: str) -> tuple[str, ...]:
    """The severities as serious as ``severity`` or more, most serious first."""
    return SEVERITIES[: SEVERITY_RANK[severity] + 1]


def rank_expr(column: str = "severity") -> pl.Expr:
    """The rank of a column of severities (``UNRANKED`` for other values), to sort by."""
    return pl.col(column).replace_strict(SEVERITY_RANK, default=UNRANKED, return_dtype=pl.Int8)


def name_expr(rank_column: str) -> pl.Expr:
    """A column of ranks back to severity names (null for a rank that names none)."""
    return pl.col(rank_column).replace_strict(dict(enumerate(SEVERITIES)), default=None,
                                              return_dtype=pl.String)
