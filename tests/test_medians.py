"""Exact medians by two passes of binned counts equal polars' own group-by median."""

from __future__ import annotations

import numpy as np
import polars as pl
from polars.testing import assert_frame_equal

from bodycensus.science.rules.medians import VALUE, binned_medians


def test_binned_medians_equal_polars_medians_bit_for_bit() -> None:
    rng = np.random.default_rng(5)
    groups = rng.integers(0, 40, 20_000)
    values = rng.normal(0.0, 3.0, 20_000) * (groups + 1) / 7.0
    values[::97] = np.round(values[::97], 1)  # ties, and many values in one bin
    frame = pl.DataFrame({"g": groups, VALUE: values}).vstack(pl.DataFrame({
        "g": [100, 101, 101, 102, 102, 102, 103, 103],  # one value; two; a null; equal values
        VALUE: [1.5, 0.1, 0.7, 2.0, None, 3.0, 4.25, 4.25]}))
    found = binned_medians(frame.lazy, ["g"]).sort("g")
    expected = (frame.drop_nulls(VALUE).group_by("g")
                .agg(pl.col(VALUE).median().alias("median")).sort("g"))
    assert found.height == expected.height == 44
    assert found.filter(pl.col("g") == 101)["median"].item() == 0.4  # 0.1 + (0.7 - 0.1) / 2
    assert_frame_equal(found, expected, check_exact=True, check_dtypes=False)
