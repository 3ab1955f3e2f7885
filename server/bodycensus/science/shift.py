"""Has a distribution shifted between two runs of a generator? A two-sample test per label and
field, its effect size, and false-discovery control over all the tests of a comparison.

- The test is the two-sample Kolmogorov-Smirnov test (``scipy.stats.ks_2samp``): its statistic D
  is the largest gap between the two empirical distribution functions, free of any assumed
  shape, and unchanged by a monotonic change of scale (log or linear give the same D).
- The effect size is the Wasserstein-1 distance (``scipy.stats.wasserstein_distance``) divided
  by the pooled standard deviation of the two samples: a pure shift of the location by ``k``
  standard deviations gives ``k``, so the number reads as "how many standard deviations the
  distribution moved", whatever D and the sample sizes say about significance.
- Many labels times many fields make many tests; the p-values are adjusted by the
  Benjamini-Hochberg procedure (``scipy.stats.false_discovery_control``), which keeps the
  expected share of false alarms among the reported shifts at ``fdr`` (Benjamini & Hochberg
  1995, J. R. Stat. Soc. B 57, 289).

Positive quantities spanning orders of magnitude are compared as log10 (the effect size then
counts standard deviations of the logarithm); eccentricity, bounded in [0, 1), as it is.

The test assumes independent draws. Bodies of one system are not (they share a star, an age,
a history), so ``engines.shifts`` hands it one value per system; see there.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TypedDict

import numpy as np
import polars as pl
from numpy.typing import NDArray
from scipy import stats

FloatArray = NDArray[np.float64]
MIN_SAMPLE = 20  # fewer values on either side: no test (common practice for KS asymptotics)
FDR = 0.05  # default false-discovery rate of the reported shifts
LINEAR_FIELDS = frozenset({"eccentricity"})  # compared as they are; the others as log10
HISTOGRAM_BINS = 40


class Histogram(TypedDict):
    """Two samples binned on shared edges, each as fractions of its own size."""

    edges: list[float]
    old: list[float]
    new: list[float]


@dataclass(frozen=True)
class ShiftTest:
    """One two-sample test: KS statistic and p-value, and the sample sizes."""

    statistic: float
    p_value: float
    n_old: int
    n_new: int


def on_test_scale(field: str) -> pl.Expr:
    """``field`` on the scale the test compares: log10 unless linear, null where not finite
    (or, for a log field, not positive: those are ``error`` findings already)."""
    column = pl.col(field).cast(pl.Float64)
    kept = column.is_finite() if field in LINEAR_FIELDS else column.is_finite() & (column > 0)
    value = column if field in LINEAR_FIELDS else column.log10()
    return pl.when(kept).then(value).alias(field)


def pooled_sd(old: FloatArray, new: FloatArray) -> float:
    """The standard deviation of the two samples' values about their own means, pooled."""
    dof = len(old) + len(new) - 2
    squares = ((old - old.mean()) ** 2).sum() + ((new - new.mean()) ** 2).sum()
    return float(np.sqrt(squares / dof)) if dof > 0 else 0.0


def effect_size(old: FloatArray, new: FloatArray) -> float:
    """Wasserstein-1 distance over the pooled standard deviation (0 for identical samples)."""
    distance = float(stats.wasserstein_distance(old, new))
    spread = pooled_sd(old, new)
    if spread > 0:
        return distance / spread
    return 0.0 if distance == 0 else float("inf")


def shift_test(old: FloatArray, new: FloatArray) -> ShiftTest | None:
    """Test whether ``new`` comes from the distribution of ``old``; None if either has fewer
    than ``MIN_SAMPLE`` values. Both are on the test scale already (``on_test_scale``)."""
    if len(old) < MIN_SAMPLE or len(new) < MIN_SAMPLE:
        return None
    result = stats.ks_2samp(old, new)  # exact p-value for small samples, asymptotic above
    return ShiftTest(float(result.statistic), float(result.pvalue), len(old), len(new))


def adjusted_p_values(p_values: list[float]) -> list[float]:
    """Benjamini-Hochberg adjusted p-values (q-values) of a family of tests, in their order."""
    if not p_values:
        return []
    return [float(q) for q in stats.false_discovery_control(np.asarray(p_values), method="bh")]


def overlaid_histogram(old: FloatArray, new: FloatArray, bins: int = HISTOGRAM_BINS
                       ) -> Histogram:
    """Both samples binned on the same edges, each as fractions of its own count, so runs of
    different sizes draw on one axis: ``{"edges", "old", "new"}``."""
    both = np.concatenate([old, new])
    low, high = float(both.min()), float(both.max())
    if high <= low:
        low, high = low - 0.5, high + 0.5
    edges = np.linspace(low, high, bins + 1)
    counts = [np.histogram(sample, edges)[0] / max(len(sample), 1) for sample in (old, new)]
    return {"edges": edges.tolist(), "old": counts[0].tolist(), "new": counts[1].tolist()}
