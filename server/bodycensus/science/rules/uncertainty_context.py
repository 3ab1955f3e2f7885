"""The uncertainty columns of the derived context: each measured value's relative uncertainty,
whether a mass is only an upper limit, and the spread Kepler's law allows a period.

A catalogue may give an uncertainty beside a value (``mass_error``, symmetric or the + side, and
``mass_error_low``, the - side; the same for radius, semi-major axis and period). Rules then
judge a value in standard deviations instead of a fixed tolerance. A mass whose lower
uncertainty is as large as the value (or a zero mass with an uncertainty, as TEPCat writes an
upper limit) is an upper limit: density rules do not judge it (``mass-upper-limit`` says so).
"""

from __future__ import annotations

import polars as pl

from bodycensus.science.units import A_PRINTED

# Kepler's law P ~ a^1.5 (M + m)^-0.5: relative errors of a and the host mass count 1.5x and
# 0.5x in the period (first-order propagation of uncorrelated errors).
A_WEIGHT, MASS_WEIGHT = 1.5, 0.5


def relative_error(field: str, side: str = "low") -> pl.Expr:
    """The relative uncertainty of ``field`` on one side (the - side falls back on the symmetric
    or + one, and the other way round); null when the catalogue gives none."""
    low, high = pl.col(f"{field}_error_low").abs(), pl.col(f"{field}_error").abs()
    error = pl.coalesce(low, high) if side == "low" else pl.coalesce(high, low)
    value = pl.col(field)
    return pl.when(value > 0).then(error / value)


def mass_upper_limit() -> pl.Expr:
    """A mass that is only an upper limit: its lower uncertainty reaches zero, or it is zero
    with an uncertainty (the upper limit then being the uncertainty)."""
    mass, error = pl.col("mass"), pl.coalesce(pl.col("mass_error_low").abs(),
                                              pl.col("mass_error").abs())
    return (((mass > 0) & (error >= mass)) | ((mass == 0) & (pl.col("mass_error").abs() > 0))
            ).fill_null(False)


def density_relative_error() -> pl.Expr:
    """The relative uncertainty of the bulk density toward lower values: a lighter mass (- side)
    or a larger radius (+ side), sqrt((dm/m)^2 + (3 dr/r)^2); a side not given counts as
    zero, and null when neither is given."""
    mass, radius = relative_error("mass", "low"), relative_error("radius", "high")
    given = mass.is_not_null() | radius.is_not_null()
    spread = (mass.fill_null(0.0) ** 2 + (3.0 * radius.fill_null(0.0)) ** 2).sqrt()
    return pl.when(given).then(spread)


def uncertainty_columns() -> list[pl.Expr]:
    """Per body: ``_mass_upper_limit``, ``_density_error`` (relative), ``_mass_error``,
    ``_a_error`` (relative, the printed precision where no uncertainty is given) and
    ``_period_error`` (relative)."""
    a_error = pl.coalesce(relative_error("semi_major_axis", "high"), pl.col(A_PRINTED))
    return [mass_upper_limit().alias("_mass_upper_limit"),
            density_relative_error().alias("_density_error"),
            relative_error("mass", "high").alias("_mass_error"),
            a_error.alias("_a_error"),
            relative_error("period", "high").alias("_period_error")]


def kepler_sigma(host_mass_error: float) -> pl.Expr:
    """The relative standard deviation of period / Kepler period from the uncertainties of the
    semi-major axis (or its printed precision), the parent's mass (``host_mass_error`` where the
    catalogue gives none) and the period; reads the orbit columns of the context."""
    a = pl.col("_a_error").fill_null(0.0)
    mass = pl.col("parent_mass_error").fill_null(host_mass_error)
    period = pl.col("_period_error").fill_null(0.0)
    return ((A_WEIGHT * a) ** 2 + (MASS_WEIGHT * mass) ** 2 + period ** 2).sqrt()
