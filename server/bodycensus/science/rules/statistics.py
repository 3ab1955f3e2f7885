"""Rules that compare a body with the rest of its label: robust outliers in log space.

Stars are left to their family's band: one label of hosts holds dwarfs, giants and white
dwarfs, whose densities differ by nature by up to 10^9 (issue 12: 267 of 5,005 exoplanet.eu
hosts were giants or white dwarfs flagged as outliers of "host star").

The robust z-scores are computed in ``rules/context.py`` over the whole table (a window computed
after a filter would see only the flagged rows).
"""

from __future__ import annotations

import polars as pl

from bodycensus.science.families import NON_STELLAR_FAMILIES
from bodycensus.science.rules.base import Rule, fmt

OUTLIER_Z = 6.0  # robust z beyond which a body is an outlier of its label (common practice: 3.5-6)
MIN_LABEL_SIZE = 30  # fewer bodies give no stable median and MAD
_SCORES = {"density": "_z_density", "mass": "_z_mass", "radius": "_z_radius"}


def statistics_rules() -> tuple[Rule, ...]:
    """The label-outlier rule."""
    scores = [pl.col(c) for c in _SCORES.values()]
    worst = pl.max_horizontal(scores)
    which = pl.coalesce([pl.when(s == worst).then(pl.lit(name))
                         for s, name in zip(scores, _SCORES, strict=True)])
    return (
        Rule(
            id="label-outlier", title="An outlier within its label", severity="suspect",
            source="modified z-score with the median absolute deviation (Iglewicz & Hoaglin 1993)",
            needs=("label", "density"), value=worst, limit=pl.lit(OUTLIER_Z),
            unit="robust z", scope="statistics", families=NON_STELLAR_FAMILIES,
            fires=(worst > OUTLIER_Z) & (pl.col("_label_size") >= MIN_LABEL_SIZE)
            & worst.is_finite(),
            message=pl.format("log10 {} is {} robust sigmas from the median of label '{}'", which,
                              fmt(worst), pl.col("label")),
        ),
    )
