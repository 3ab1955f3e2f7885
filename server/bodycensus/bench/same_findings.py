"""Do two implementations of the rules give the same findings? The same multiset of (body,
rule, severity), and value and limit equal within a relative tolerance (nulls as nulls).

Floats are compared within a tolerance because two libraries may round the same formula
differently in its last bits (polars multiplies by a reciprocal where numpy divides).
"""

from __future__ import annotations

from dataclasses import dataclass

import polars as pl

KEY = ("body", "rule", "severity")
NUMBERS = ("value", "limit")
RELATIVE_TOLERANCE = 1e-9


@dataclass(frozen=True)
class Agreement:
    """The outcome of a comparison: counts on each side and what differs, said in one line."""

    ours: int
    theirs: int
    differences: list[str]

    @property
    def same(self) -> bool:
        """Whether the two sets of findings are the same."""
        return not self.differences

    def line(self) -> str:
        """One line: "identical (N)" (N findings) or what differs, first three differences."""
        if self.same:
            return f"identical ({self.ours:,})"
        return f"DIFFERENT ({self.ours:,} vs {self.theirs:,}): " + \
            "; ".join(self.differences[:3])


def _normal(findings: pl.DataFrame) -> pl.DataFrame:
    """The compared columns, typed alike, in one order."""
    return (findings.select(pl.col(KEY).cast(pl.String), pl.col(NUMBERS).cast(pl.Float64))
            .sort([*KEY, *NUMBERS], nulls_last=True))


def _key_differences(ours: pl.DataFrame, theirs: pl.DataFrame) -> list[str]:
    """Keys found more often on one side than on the other."""
    counted = (ours.group_by(KEY).len("ours")
               .join(theirs.group_by(KEY).len("theirs"), on=list(KEY), how="full", coalesce=True)
               .fill_null(0).filter(pl.col("ours") != pl.col("theirs")).sort(KEY))
    return [f"{r['body']} {r['rule']} {r['severity']}: {r['ours']} vs {r['theirs']}"
            for r in counted.head(5).iter_rows(named=True)]


def _close(a: pl.Expr, b: pl.Expr) -> pl.Expr:
    """Equal within the relative tolerance, or both null, or both the same infinity/NaN."""
    both_null = a.is_null() & b.is_null()
    scale = pl.max_horizontal(a.abs(), b.abs())
    near = (a - b).abs() <= RELATIVE_TOLERANCE * scale
    return both_null | (a == b).fill_null(False) | near.fill_null(False) | \
        (a.is_nan() & b.is_nan()).fill_null(False)


def compare_findings(ours: pl.DataFrame, theirs: pl.DataFrame) -> Agreement:
    """Compare two findings tables (columns body, rule, severity, value, limit at least)."""
    a, b = _normal(ours), _normal(theirs)
    differences = _key_differences(a, b)
    if not differences:
        paired = pl.concat([a, b.select(pl.all().name.suffix("_ref"))], how="horizontal")
        bad = paired.filter(~(_close(pl.col("value"), pl.col("value_ref"))
                              & _close(pl.col("limit"), pl.col("limit_ref"))))
        differences = [f"{r['body']} {r['rule']}: value {r['value']} vs {r['value_ref']}, "
                       f"limit {r['limit']} vs {r['limit_ref']}"
                       for r in bad.head(5).iter_rows(named=True)]
    return Agreement(len(a), len(b), differences)
