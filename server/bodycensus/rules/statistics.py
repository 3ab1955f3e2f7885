"""Rules that compare a body with the rest of its label: robust outliers in log space."""

from __future__ import annotations

import polars as pl

from bodycensus.rules.base import Rule, fmt

OUTLIER_Z = 6.0  # robust z beyond which a body is an outlier of its label (common practice: 3.5-6)
MIN_LABEL_SIZE = 30  # fewer bodies give no stable median and MAD
_FIELDS = ("density", "_mass", "_radius")
_MAD_TO_SIGMA = 0.6745  # MAD of a normal distribution is 0.6745 sigma (Iglewicz & Hoaglin 1993)


def _robust_z(column: str) -> pl.Expr:
    """0.6745 (x - median) / MAD of log10(column) within the body's label."""
    x = pl.col(column).log10()
    median = x.median().over("label")
    mad = (x - median).abs().median().over("label")
    return (_MAD_TO_SIGMA * (x - median) / mad).abs()


def statistics_rules() -> tuple[Rule, ...]:
    """The label-outlier rule."""
    scores = [_robust_z(c) for c in _FIELDS]
    worst = pl.max_horizontal(scores)
    which = pl.coalesce([pl.when(s == worst).then(pl.lit(c.removeprefix("_")))
                         for s, c in zip(scores, _FIELDS)])
    big_label = pl.len().over("label") >= MIN_LABEL_SIZE
    return (
        Rule(
            id="label-outlier", title="An outlier within its label", severity="suspect",
            source="modified z-score with the median absolute deviation (Iglewicz & Hoaglin 1993)",
            needs=("label", "density"), value=worst, limit=pl.lit(OUTLIER_Z),
            unit="robust z", scope="statistics",
            fires=(worst > OUTLIER_Z) & big_label & worst.is_finite(),
            message=pl.format("log10 {} is {} robust sigmas from the median of label '{}'", which,
                              fmt(worst), pl.col("label")),
        ),
    )
