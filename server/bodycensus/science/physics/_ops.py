"""The few non-operator functions formulas need, for floats, numpy arrays and polars expressions.

Formulas are written with ``+ - * / **`` plus these, so one definition serves a scalar
(tests, the body page) and a ``pl.Expr`` (whole tables).
"""

from __future__ import annotations

from typing import TypeVar

import numpy as np
import polars as pl

Num = TypeVar("Num", float, np.ndarray, pl.Expr)


def log(x: Num) -> Num:
    """Natural logarithm."""
    return x.log() if isinstance(x, pl.Expr) else np.log(x)


def log10(x: Num) -> Num:
    """Base-10 logarithm."""
    return x.log10() if isinstance(x, pl.Expr) else np.log10(x)


def clip_min(x: Num, lower: float) -> Num:
    """``x`` with values below ``lower`` raised to it."""
    return x.clip(lower_bound=lower) if isinstance(x, pl.Expr) else np.maximum(x, lower)


def as_float(x: Num) -> Num:
    """Turn numpy scalar results back into plain floats; leave arrays and expressions alone."""
    if isinstance(x, np.generic):
        return float(x)
    return x
