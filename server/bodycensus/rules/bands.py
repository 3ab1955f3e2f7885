"""Each family's plausible density at a body's mass, and unit slips that would explain a miss.

The band comes from ``families.FAMILY_PARAMETERS`` (a factor times a composition curve from
``physics.bodies``). A density far outside it that one known unit factor would bring inside is
reported as a likely unit slip, never silently rescaled.
"""

from __future__ import annotations

import polars as pl

from bodycensus.families import FAMILY_PARAMETERS
from bodycensus.physics import bodies
from bodycensus.units import M_EARTH, M_JUPITER, M_SUN, R_EARTH, R_JUPITER, R_SUN

_MASS = pl.col("_mass")


def _curve_density(curve: str) -> pl.Expr:
    """Density (kg m-3) of a named composition curve at each body's mass."""
    if curve in bodies.SEAGER_FITS:
        return bodies.composition_density(_MASS, curve)
    curves = {
        "cold_hhe": bodies.cold_hhe_density,
        "white_dwarf": bodies.white_dwarf_density,
        "main_sequence": bodies.main_sequence_density,
    }
    return curves[curve](_MASS)


def _band_edge(side: str) -> pl.Expr:
    expr: pl.Expr | None = None
    for family, params in FAMILY_PARAMETERS.items():
        band = params.density_band
        if band is None:
            continue
        curve, factor = ((band.low_curve, band.low_factor) if side == "low"
                         else (band.high_curve, band.high_factor))
        edge = pl.lit(factor) if curve == "const" else factor * _curve_density(curve)
        condition = pl.col("family") == family
        expr = pl.when(condition).then(edge) if expr is None else expr.when(condition).then(edge)
    assert expr is not None
    return expr.otherwise(None)


def band_columns() -> list[pl.Expr]:
    """The ``_band_low`` and ``_band_high`` columns (null for families without a band)."""
    return [_band_edge("low").alias("_band_low"), _band_edge("high").alias("_band_high")]


def band_low() -> pl.Expr:
    """Lowest plausible density for the body's family at its mass."""
    return pl.col("_band_low")


def band_high() -> pl.Expr:
    """Highest plausible density for the body's family at its mass."""
    return pl.col("_band_high")


# How a slip scales density: a mass unit slip by f scales it by f, a radius slip by f^-3.
UNIT_SLIPS: tuple[tuple[float, str], ...] = (
    (1e9, "radius may be in km where m was meant"),
    (1e-9, "radius may be in m where km was meant"),
    (1e3, "mass may be in g where kg was meant"),
    (1e-3, "mass may be in kg where g was meant"),
    (M_JUPITER / M_EARTH, "mass may be in Jupiter masses where Earth masses were meant"),
    (M_EARTH / M_JUPITER, "mass may be in Earth masses where Jupiter masses were meant"),
    (M_SUN / M_JUPITER, "mass may be in solar masses where Jupiter masses were meant"),
    (M_JUPITER / M_SUN, "mass may be in Jupiter masses where solar masses were meant"),
    ((R_EARTH / R_JUPITER) ** 3, "radius may be in Jupiter radii where Earth radii were meant"),
    ((R_JUPITER / R_EARTH) ** 3, "radius may be in Earth radii where Jupiter radii were meant"),
    ((R_JUPITER / R_SUN) ** 3, "radius may be in solar radii where Jupiter radii were meant"),
    ((R_SUN / R_JUPITER) ** 3, "radius may be in Jupiter radii where solar radii were meant"),
)
SLIP_TOLERANCE = 10.0  # a slip is suspected only when the density misses its band by > 10x


def unit_slip_hint(density: pl.Expr) -> pl.Expr:
    """The likeliest unit slip, as text, when ``density`` misses its band by more than 10x
    and dividing by one known factor brings it inside; null otherwise."""
    low, high = band_low(), band_high()
    far_out = (density < low / SLIP_TOLERANCE) | (density > high * SLIP_TOLERANCE)
    hint: pl.Expr | None = None
    for factor, text in UNIT_SLIPS:
        fixed = density / factor
        inside = far_out & (fixed >= low) & (fixed <= high)
        hint = (pl.when(inside).then(pl.lit(text)) if hint is None
                else hint.when(inside).then(pl.lit(text)))
    assert hint is not None
    return hint.otherwise(None)
