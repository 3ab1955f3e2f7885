"""The few non-operator functions formulas need, for floats, numpy arrays and polars expressions.

Formulas are written with ``+ - * /`` and whole-number ``**`` plus these, so one definition serves
a scalar (tests, the body page), a numpy array and a ``pl.Expr`` (whole tables). A fractional
power goes through ``power``: Python's ``float ** float`` gives a complex number for a negative
base where numpy and polars give NaN, so its type is ``Any``; ``power`` gives NaN in all three.
"""

from __future__ import annotations

import math
from typing import TypeVar

import numpy as np
import numpy.typing as npt
import polars as pl

FloatArray = npt.NDArray[np.float64]
Num = TypeVar("Num", float, FloatArray, pl.Expr)


def power(x: Num, exponent: float) -> Num:
    """``x ** exponent``; NaN for a negative base and a fractional exponent, in every form."""
    if isinstance(x, pl.Expr):
        return x.pow(exponent)
    if isinstance(x, np.ndarray):
        return np.power(x, exponent)
    if isinstance(x, np.generic):  # a numpy scalar stays one, as under ``**``
        return np.float64(np.power(x, exponent))
    try:
        return math.pow(x, exponent)
    except ValueError:  # math domain error: a negative base, a fractional exponent
        return math.nan


def exp10(x: Num) -> Num:
    """``10 ** x``."""
    if isinstance(x, pl.Expr):
        return pl.lit(10.0).pow(x)
    if isinstance(x, np.ndarray):
        return np.power(10.0, x)
    if isinstance(x, np.generic):
        return np.float64(np.power(10.0, x))
    return math.pow(10.0, x)


# The three below give a numpy float64 for a scalar (a float), so the arithmetic after them follows
# numpy as for arrays: a zero divisor gives inf, not ZeroDivisionError.
def log(x: Num) -> Num:
    """Natural logarithm."""
    if isinstance(x, pl.Expr):
        return x.log()
    if isinstance(x, np.ndarray):
        return np.log(x)
    return np.float64(np.log(x))


def log10(x: Num) -> Num:
    """Base-10 logarithm."""
    if isinstance(x, pl.Expr):
        return x.log10()
    if isinstance(x, np.ndarray):
        return np.log10(x)
    return np.float64(np.log10(x))


def clip_min(x: Num, lower: float) -> Num:
    """``x`` with values below ``lower`` raised to it."""
    if isinstance(x, pl.Expr):
        return x.clip(lower_bound=lower)
    if isinstance(x, np.ndarray):
        return np.maximum(x, lower)
    return np.float64(np.maximum(x, lower))
