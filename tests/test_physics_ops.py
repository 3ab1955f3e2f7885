"""The non-operator functions formulas use: the same answer on floats, numpy arrays and polars
expressions, NaN (not a complex number) for a fractional power of a negative base."""

from __future__ import annotations

import math

import numpy as np
import polars as pl
import pytest
from three_forms import assert_three_forms

from bodycensus.science.physics._ops import clip_min, exp10, log, log10, power

X = [1e-6, 0.5, 1.0, 2.0, 1e6]


@pytest.mark.parametrize("exponent", [0.5, 1.0 / 3.0, 0.8, 3.5, -1.0 / 3.0, 2.0])
def test_power_agrees_with_python_in_three_forms(exponent: float) -> None:
    assert_three_forms(lambda x: power(x, exponent), {"x": X})
    assert power(8.0, 1.0 / 3.0) == pytest.approx(2.0, rel=1e-15)
    assert [power(x, exponent) for x in X] == [x**exponent for x in X]


def test_a_fractional_power_of_a_negative_base_is_nan_in_every_form() -> None:
    """numpy and polars give NaN; Python's own float ** would give a complex number."""
    assert isinstance((-8.0) ** (1.0 / 3.0), complex)
    assert math.isnan(power(-8.0, 1.0 / 3.0))
    with np.errstate(invalid="ignore"):
        assert np.isnan(power(np.array([-8.0]), 1.0 / 3.0)).all()
    column = pl.DataFrame({"x": [-8.0]}).select(power(pl.col("x"), 1.0 / 3.0))["x"]
    assert column.is_nan().all()
    assert power(-2.0, 3.0) == -8.0  # a whole exponent keeps its sign


def test_exp10_and_the_logarithms_in_three_forms() -> None:
    assert_three_forms(exp10, {"x": [-3.0, -0.5, 0.0, 1.0, 2.5]})
    assert_three_forms(log, {"x": X})
    assert_three_forms(log10, {"x": X})
    assert exp10(2.0) == 100.0 and log10(1000.0) == pytest.approx(3.0, abs=1e-15)
    assert log(math.e) == pytest.approx(1.0, abs=1e-15)


def test_clip_min_raises_values_below_the_floor() -> None:
    assert_three_forms(lambda x: clip_min(x, 0.75), {"x": X})
    assert clip_min(0.5, 0.75) == 0.75 and clip_min(2.0, 0.75) == 2.0
    assert math.isnan(clip_min(math.nan, 0.0))  # as numpy's maximum: NaN stays NaN


def test_numpy_scalars_stay_numpy_scalars_so_a_zero_divisor_gives_inf() -> None:
    """The white-dwarf radius is 0 past the Nauenberg (1972) mass: its density must come out inf
    (as for arrays and expressions), not raise ZeroDivisionError."""
    floor = clip_min(0.0, 0.0)
    assert isinstance(floor, np.float64) and isinstance(log(2.0), np.float64)
    assert isinstance(power(floor, 0.5), np.float64)
    assert isinstance(exp10(np.float64(1.0)), np.float64)
    with np.errstate(divide="ignore"):
        assert 1.0 / power(floor, 0.5) == math.inf
