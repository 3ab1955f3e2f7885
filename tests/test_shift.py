"""The two-sample shift test (science/shift.py) against scipy's own functions and known answers.

Sources: the KS statistic is the largest gap between empirical distribution functions
(Kolmogorov 1933, Smirnov 1948), checked by hand below; for a location shift of delta standard
deviations of a normal law the expected gap is Phi(delta/2) - Phi(-delta/2) (from the two normal
CDFs); Benjamini & Hochberg 1995 (J. R. Stat. Soc. B 57, 289) give the adjusted p-values
p_(i) m / i, made monotone from the largest down.
"""

from __future__ import annotations

import math

import numpy as np
import polars as pl
import pytest
from scipy import stats

from bodycensus.science.shift import (
    MIN_SAMPLE,
    adjusted_p_values,
    effect_size,
    on_test_scale,
    overlaid_histogram,
    shift_test,
)


def test_the_statistic_is_the_largest_gap_between_the_two_step_functions() -> None:
    old = np.arange(30, dtype=float)  # 0..29
    new = np.arange(30, dtype=float) + 10  # 10..39: at x = 9.5 the gap is 10/30
    test = shift_test(old, new)
    assert test is not None and test.statistic == pytest.approx(10 / 30)
    assert test.p_value == pytest.approx(stats.ks_2samp(old, new).pvalue)


def test_a_tenth_of_a_standard_deviation_in_ten_thousand_is_found() -> None:
    rng = np.random.default_rng(11)
    old, new = rng.normal(0, 1, 10_000), rng.normal(0.1, 1, 10_000)
    test = shift_test(old, new)
    assert test is not None
    expected_gap = 2 * stats.norm.cdf(0.05) - 1  # 0.0399
    assert test.statistic == pytest.approx(expected_gap, abs=0.012)
    assert test.p_value < 1e-4
    assert effect_size(old, new) == pytest.approx(0.1, abs=0.03)  # a pure shift: W1/SD = delta


def test_same_law_gives_no_small_p_value_and_a_small_effect() -> None:
    rng = np.random.default_rng(12)
    old, new = rng.normal(0, 1, 10_000), rng.normal(0, 1, 10_000)
    test = shift_test(old, new)
    assert test is not None and test.p_value > 0.01 and effect_size(old, new) < 0.05


def test_identical_samples_have_zero_effect_and_too_few_values_no_test() -> None:
    values = np.linspace(1, 2, 50)
    assert effect_size(values, values) == 0.0
    assert shift_test(values[: MIN_SAMPLE - 1], values) is None


def test_benjamini_hochberg_by_hand() -> None:
    p = [0.01, 0.04, 0.03, 0.5]
    # sorted 0.01, 0.03, 0.04, 0.5 -> 0.04, 0.06, 0.0533, 0.5 -> monotone: 0.04, 0.0533, ...
    expected = [0.04, 0.0533333, 0.0533333, 0.5]
    assert adjusted_p_values(p) == pytest.approx(expected, rel=1e-5)
    assert adjusted_p_values([]) == []


def test_positive_fields_are_compared_as_logarithms_eccentricity_as_it_is() -> None:
    raw = pl.DataFrame({"mass": [1.0, 10.0, 100.0, 0.0, -5.0, math.nan, math.inf, None],
                        "eccentricity": [0.0, 0.5, math.nan, None, 0.1, 0.2, 0.3, 0.4]})
    scaled = raw.select(on_test_scale("mass"), on_test_scale("eccentricity"))
    assert scaled["mass"].to_list() == [0.0, 1.0, 2.0, None, None, None, None, None]
    assert scaled["eccentricity"].to_list() == [0.0, 0.5, None, None, 0.1, 0.2, 0.3, 0.4]


def test_the_histograms_share_edges_and_are_fractions() -> None:
    hist = overlaid_histogram(np.zeros(10) + 1.0, np.linspace(0, 2, 30), bins=4)
    assert len(hist["edges"]) == 5 and hist["edges"][0] == 0.0 and hist["edges"][-1] == 2.0
    assert sum(hist["old"]) == pytest.approx(1.0) and sum(hist["new"]) == pytest.approx(1.0)
