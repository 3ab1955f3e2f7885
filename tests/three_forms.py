"""Test helper: a physics formula must give the same numbers on floats, numpy and polars."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import polars as pl


def assert_three_forms(formula: Callable[..., Any], columns: dict[str, list[float]],
                       **constants: Any) -> None:
    """Evaluate ``formula`` row by row on floats, once on numpy arrays and once as a polars
    expression over a DataFrame with these columns; all three must agree to rounding."""
    names = list(columns)
    arrays = [np.asarray(columns[name], dtype=np.float64) for name in names]
    scalars = []
    for row in zip(*arrays, strict=True):
        result = formula(*(float(x) for x in row), **constants)
        assert isinstance(result, float), f"{formula.__name__} gave {type(result)} for floats"
        scalars.append(result)
    vector = formula(*arrays, **constants)
    assert isinstance(vector, np.ndarray)
    frame = pl.DataFrame({name: array for name, array in zip(names, arrays, strict=True)})
    expression = formula(*(pl.col(name) for name in names), **constants)
    assert isinstance(expression, pl.Expr)
    table = frame.select(expression.alias("out"))["out"].to_numpy()
    np.testing.assert_allclose(vector, scalars, rtol=1e-12)
    np.testing.assert_allclose(table, scalars, rtol=1e-12)
