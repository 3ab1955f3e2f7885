"""Distribution shifts between two runs: for each label and field, a bounded sample of each run
and the two-sample test of ``science.shift``, with false-discovery control over every test.

Memory stays flat however large the catalogues: each run gives at most ``SAMPLE_CAP`` bodies per
label, chosen by a hash of the body id in one streaming pass. A bounded sample, not binned
counts, because the KS test then runs on real values with scipy's own p-values (binning would
cap D by the bin width and need a home-made null distribution). The cap also keeps the test's
resolution where it means something: with millions of bodies every difference, however small,
is "significant", while 20,000 per side still finds a shift of 0.05 standard deviation (D about
0.02) and the effect size says how large it is. Hashing the id (not a random draw) makes a
comparison repeatable and picks the same bodies in both runs when the ids persist, so a label
whose values did not change gives D = 0 exactly.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TypedDict

import numpy as np
import polars as pl

from bodycensus.science.shift import (
    FDR,
    LINEAR_FIELDS,
    adjusted_p_values,
    on_test_scale,
    overlaid_histogram,
    shift_test,
)

SAMPLE_CAP = 20_000  # bodies per label and run at most
SAMPLE_SEED = 20_261_203  # seed of the id hash that picks the sample
SHIFT_FIELDS: tuple[str, ...] = ("mass", "radius", "semi_major_axis", "eccentricity", "period",
                                 "rotation_period", "age", "temperature", "luminosity")
_HASH_RANGE = 1 << 32


class Histogram(TypedDict):
    """Both samples binned on shared edges, as fractions of each sample (test scale)."""

    edges: list[float]
    old: list[float]
    new: list[float]


class ShiftRow(TypedDict):
    """One label and field: the test, its adjusted p-value and whether a shift is reported."""

    label: str
    field: str
    scale: str  # "log10" or "linear": the scale of the test, the effect and the histogram
    n_old: int
    n_new: int
    statistic: float
    p_value: float
    q_value: float  # Benjamini-Hochberg adjusted over every test of the comparison
    effect: float  # shift in pooled standard deviations (Wasserstein-1 / pooled SD)
    shifted: bool
    histogram: Histogram


def label_sample(bodies: pl.LazyFrame, fields: Sequence[str], cap: int = SAMPLE_CAP
                 ) -> pl.DataFrame:
    """At most about ``cap`` bodies of each label (label and ``fields`` columns), picked by a
    hash of the id (row number where the id is blank): two streaming passes, counts then rows."""
    counts = bodies.group_by("label").agg(pl.len().alias("n")).collect(engine="streaming")
    share = {label: min(1.0, cap / n) for label, n in counts.iter_rows() if label is not None}
    threshold = pl.col("label").replace_strict(
        {k: int(v * _HASH_RANGE) for k, v in share.items()}, default=0, return_dtype=pl.Int64)
    key = pl.coalesce(pl.col("id"), pl.col("_row").cast(pl.String))
    picked = (key.hash(seed=SAMPLE_SEED) % _HASH_RANGE).cast(pl.Int64) < threshold
    return (bodies.filter(pl.col("label").is_not_null() & picked)
            .select("label", *fields).collect(engine="streaming"))


def _values(sample: pl.DataFrame, label: str, field: str) -> np.ndarray:
    column = sample.filter(pl.col("label") == label)[field].cast(pl.Float64)
    return on_test_scale(field, column.drop_nulls().to_numpy())


def compare_distributions(old: pl.LazyFrame, new: pl.LazyFrame, fdr: float = FDR,
                          cap: int = SAMPLE_CAP) -> list[ShiftRow]:
    """Every label and field present in both runs with enough values, most shifted first."""
    fields = [f for f in SHIFT_FIELDS
              if f in old.collect_schema() and f in new.collect_schema()]
    samples = label_sample(old, fields, cap), label_sample(new, fields, cap)
    labels = sorted(set(samples[0]["label"].unique()) & set(samples[1]["label"].unique()))
    rows: list[ShiftRow] = []
    for label in labels:
        for field in fields:
            a, b = (_values(s, label, field) for s in samples)
            test = shift_test(a, b)
            if test is None:
                continue
            rows.append({"label": label, "field": field,
                         "scale": "linear" if field in LINEAR_FIELDS else "log10",
                         "n_old": test.n_old, "n_new": test.n_new, "statistic": test.statistic,
                         "p_value": test.p_value, "q_value": 1.0, "effect": test.effect,
                         "shifted": False,
                         "histogram": Histogram(**overlaid_histogram(a, b))})
    for row, q in zip(rows, adjusted_p_values([r["p_value"] for r in rows]), strict=True):
        row["q_value"], row["shifted"] = q, q < fdr
    return sorted(rows, key=lambda r: (not r["shifted"], r["q_value"], -r["statistic"]))
