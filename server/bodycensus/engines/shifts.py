"""Distribution shifts between two runs: for each label and field, a bounded sample of each run
and the two-sample test of ``science.shift``, with false-discovery control over every test.

The unit of the test is the system, not the body. Bodies of one system share a star, an age and
a history, so they are not independent draws: tested body by body, pairs of demo catalogues
from the same generator (different seeds) gave a reported shift in 8 of 30 pairs, mostly in
temperatures and ages, which follow the host. Each system (each body, where the catalogue has
no system) gives one value per label and field, the median of its bodies of that label; the KS
test compares those medians. The effect size and the overlaid histograms use the bodies
themselves, so they read in the bodies' own standard deviations.

Memory stays flat however large the catalogues: each run gives the bodies of at most
``SAMPLE_CAP`` systems per label, chosen by a hash of the system name in one streaming pass. A
bounded sample, not binned counts, because the KS test then runs on real values with scipy's own
p-values (binning would cap D by the bin width and need a home-made null distribution). The cap
also keeps the test's resolution where it means something: with millions of bodies any
difference, however small, is "significant", while 20,000 units a side still find a shift of
0.05 standard deviation and the effect size says how large it is. Hashing (not a random draw)
makes a comparison repeatable and picks the same systems in both runs when names persist, so a
label whose values did not change gives D = 0 exactly.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TypedDict

import polars as pl

from bodycensus.science.shift import (
    FDR,
    LINEAR_FIELDS,
    Histogram,
    adjusted_p_values,
    effect_size,
    on_test_scale,
    overlaid_histogram,
    shift_test,
)

SAMPLE_CAP = 20_000  # systems per label and run at most
SAMPLE_SEED = 20_261_203  # seed of the hash that picks the systems
SHIFT_FIELDS: tuple[str, ...] = ("mass", "radius", "semi_major_axis", "eccentricity", "period",
                                 "rotation_period", "age", "temperature", "luminosity")
UNIT = "_unit"  # the sampling unit: the system, else the body
_HASH_RANGE = 1 << 32


class ShiftRow(TypedDict):
    """One label and field: the test, its adjusted p-value and whether a shift is reported."""

    label: str
    field: str
    scale: str  # "log10" or "linear": the scale of the test, the effect and the histogram
    n_old: int  # bodies with a value
    n_new: int
    units_old: int  # systems (or lone bodies) tested
    units_new: int
    statistic: float
    p_value: float
    q_value: float  # Benjamini-Hochberg adjusted over every test of the comparison
    effect: float  # shift in the bodies' pooled standard deviations (Wasserstein-1 / SD)
    shifted: bool
    histogram: Histogram  # the bodies on the test scale, shares of each run's sample


def unit_expr() -> pl.Expr:
    """Each body's sampling unit: its system, else its id, else its row number."""
    return pl.coalesce(pl.col("system"), pl.col("id"), pl.col("_row").cast(pl.String))


def label_sample(bodies: pl.LazyFrame, fields: Sequence[str], cap: int = SAMPLE_CAP
                 ) -> pl.DataFrame:
    """The bodies of at most about ``cap`` units of each label (columns label, the unit and
    ``fields`` on the test scale), picked by a hash of the unit: two streaming passes. Units
    are counted approximately (HyperLogLog, a few per cent): the count only sets the share."""
    counts = (bodies.group_by("label").agg(unit_expr().approx_n_unique().alias("n"))
              .collect(engine="streaming"))
    share = {label: min(1.0, cap / n) for label, n in counts.iter_rows() if label is not None}
    threshold = pl.col("label").replace_strict(
        {k: int(v * _HASH_RANGE) for k, v in share.items()}, default=0, return_dtype=pl.Int64)
    picked = (unit_expr().hash(seed=SAMPLE_SEED) % _HASH_RANGE).cast(pl.Int64) < threshold
    return (bodies.filter(pl.col("label").is_not_null() & picked)
            .select("label", unit_expr().alias(UNIT), *[on_test_scale(f) for f in fields])
            .collect(engine="streaming"))


def _row(label: str, field: str, old: pl.DataFrame, new: pl.DataFrame) -> ShiftRow | None:
    """The test of one label and field, from each run's sampled bodies of that label."""
    values = [frame.select(UNIT, field).drop_nulls() for frame in (old, new)]
    units = [v.group_by(UNIT).agg(pl.col(field).median())[field].to_numpy() for v in values]
    test = shift_test(units[0], units[1])
    if test is None:
        return None
    a, b = (v[field].to_numpy() for v in values)
    return {"label": label, "field": field,
            "scale": "linear" if field in LINEAR_FIELDS else "log10",
            "n_old": len(a), "n_new": len(b), "units_old": test.n_old, "units_new": test.n_new,
            "statistic": test.statistic, "p_value": test.p_value, "q_value": 1.0,
            "effect": effect_size(a, b), "shifted": False,
            "histogram": overlaid_histogram(a, b)}


def compare_distributions(old: pl.LazyFrame, new: pl.LazyFrame, fdr: float = FDR,
                          cap: int = SAMPLE_CAP) -> list[ShiftRow]:
    """Every label and field present in both runs with enough units, most shifted first."""
    fields = [f for f in SHIFT_FIELDS
              if f in old.collect_schema() and f in new.collect_schema()]
    samples = label_sample(old, fields, cap), label_sample(new, fields, cap)
    by_label = [dict(s.partition_by("label", as_dict=True, include_key=False)) for s in samples]
    labels = sorted({k[0] for k in by_label[0]} & {k[0] for k in by_label[1]})
    rows = [row for label in labels for field in fields
            if (row := _row(label, field, by_label[0][(label,)], by_label[1][(label,)]))]
    for row, q in zip(rows, adjusted_p_values([r["p_value"] for r in rows]), strict=True):
        row["q_value"], row["shifted"] = q, q < fdr
    return sorted(rows, key=lambda r: (not r["shifted"], r["q_value"], -r["statistic"]))
