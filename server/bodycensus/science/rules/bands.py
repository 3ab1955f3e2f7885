"""Each family's plausible density at a body's mass, and unit slips that would explain a miss.

The band comes from ``families.FAMILY_PARAMETERS`` (a factor times a composition curve from
``physics.bodies``). A density far outside it that one known unit factor would bring inside is
reported as a likely unit slip, never silently rescaled.
"""

from __future__ import annotations

import math
from typing import overload

import numpy as np
import polars as pl
from polars.expr.whenthen import ChainedThen, Then

from bodycensus.science.families import FAMILY_PARAMETERS, DensityBand
from bodycensus.science.physics import bodies
from bodycensus.science.physics._ops import Num
from bodycensus.science.units import UNITS

_MASS = pl.col("_mass")


def curve_density(curve: str, mass: Num) -> Num:
    """Density (kg m-3) of a named composition curve at ``mass`` (float, array or expression)."""
    if curve in bodies.SEAGER_FITS:
        return bodies.composition_density(mass, curve)
    curves = {
        "cold_hhe": bodies.cold_hhe_density,
        "white_dwarf": bodies.white_dwarf_density,
        "main_sequence": bodies.main_sequence_density,
        "largest_star": bodies.largest_star_density,
    }
    return curves[curve](mass)


@overload
def band_edge(band: DensityBand, side: str, mass: float) -> float: ...
@overload
def band_edge(band: DensityBand, side: str, mass: pl.Expr) -> pl.Expr: ...
def band_edge(band: DensityBand, side: str, mass: float | pl.Expr) -> float | pl.Expr:
    """The ``low`` or ``high`` plausible density (kg m-3) of a family band at ``mass`` (a float
    or an expression); a "const" curve's factor is the density itself."""
    curve, factor = ((band.low_curve, band.low_factor) if side == "low"
                     else (band.high_curve, band.high_factor))
    if isinstance(mass, pl.Expr):
        return pl.lit(factor) if curve == "const" else factor * curve_density(curve, mass)
    return factor if curve == "const" else factor * float(curve_density(curve, mass))


def band_density(band: DensityBand, mass: float | None) -> tuple[float, float] | None:
    """The (low, high) plausible density (kg m-3) of a family band at one ``mass``; None where
    the band needs a mass and has none, or a curve is past its validity (as in the table)."""
    needs_mass = band.low_curve != "const" or band.high_curve != "const"
    if needs_mass and (mass is None or not mass > 0):
        return None
    with np.errstate(divide="ignore", invalid="ignore"):
        low, high = (float(band_edge(band, side, mass or 0.0)) for side in ("low", "high"))
    return (low, high) if math.isfinite(low) and math.isfinite(high) else None


def _band_edge(side: str, computed: bool = False) -> pl.Expr:
    """Each family's ``side`` edge at the body's mass, from the curves themselves or (with
    ``computed``) from the curve columns ``with_bands`` adds: the same product either way."""
    expr: Then | ChainedThen | None = None
    for family, params in FAMILY_PARAMETERS.items():
        band = params.density_band
        if band is None:
            continue
        curve, factor = ((band.low_curve, band.low_factor) if side == "low"
                         else (band.high_curve, band.high_factor))
        edge = (factor * pl.col(_CURVE + curve) if computed and curve != "const"
                else band_edge(band, side, _MASS))
        condition = pl.col("family") == family
        expr = pl.when(condition).then(edge) if expr is None else expr.when(condition).then(edge)
    assert expr is not None
    edge = expr.otherwise(None)
    return pl.when(edge.is_finite()).then(edge)  # a curve past its validity has no band


_CURVE = "_curve_"  # working columns of ``with_bands``: one composition curve each


def with_bands(table: pl.LazyFrame) -> pl.LazyFrame:
    """``table`` with the ``_band_low`` and ``_band_high`` columns of ``band_columns``, each
    composition curve computed once (the when-chain of ``band_columns`` evaluates every
    family's curve on every row, ~20 curves for 7 distinct ones: 80% of the time of the label
    statistics' pass over the catalogue)."""
    curves = sorted({curve for params in FAMILY_PARAMETERS.values()
                     if (band := params.density_band) is not None
                     for curve in (band.low_curve, band.high_curve) if curve != "const"})
    return table.with_columns(curve_density(curve, _MASS).alias(_CURVE + curve)
                              for curve in curves).with_columns(
        _band_edge("low", computed=True).alias("_band_low"),
        _band_edge("high", computed=True).alias("_band_high")).drop(
        _CURVE + curve for curve in curves)


# A star's radius printed to one digit (0.01 R_sun) misses a white dwarf's by up to ~2x, its
# density by up to ~10x: a star is recognised as a white dwarf within 0.05-20x the curve.
DEGENERATE_SPREAD = 20.0  # common practice, for radii rounded in catalogues


def degenerate_star() -> pl.Expr:
    """A body of the ``star`` family whose density is a white dwarf's at its mass (within
    ``DEGENERATE_SPREAD``) or a neutron star's: a degenerate star by its density, whatever its
    label says (white dwarf and pulsar hosts of planets are catalogued as stars). Neither a
    unit slip nor a family-density miss."""
    density, curve = pl.col("density"), bodies.white_dwarf_density(_MASS)
    white = (density >= curve / DEGENERATE_SPREAD) & (density <= curve * DEGENERATE_SPREAD)
    neutron = FAMILY_PARAMETERS["neutron_star"].density_band
    assert neutron is not None
    compact = (density >= band_edge(neutron, "low", _MASS)) & (
        density <= band_edge(neutron, "high", _MASS))
    return ((pl.col("family") == "star") & (white.fill_null(False) | compact)).fill_null(False)


def band_columns() -> list[pl.Expr]:
    """The ``_band_low`` and ``_band_high`` columns (null for families without a band)."""
    return [_band_edge("low").alias("_band_low"), _band_edge("high").alias("_band_high")]


def band_low() -> pl.Expr:
    """Lowest plausible density for the body's family at its mass."""
    return pl.col("_band_low")


def band_high() -> pl.Expr:
    """Highest plausible density for the body's family at its mass."""
    return pl.col("_band_high")


# Known unit slips: (field, the unit the values were in, the unit they were read as). Values in
# Earth masses read as Jupiter masses come out M_jup / M_earth = 318x too large; a mass too large
# by f scales density by f, a radius too large by f scales it by f^-3.
# Astronomical units first: in real catalogues the slips were Earth units in Jupiter columns far
# more often than grams for kilograms (issue 12), and every slip that fits is listed.
UNIT_SLIPS: tuple[tuple[str, str, str], ...] = (
    ("mass", "earth_mass", "jupiter_mass"), ("mass", "jupiter_mass", "earth_mass"),
    ("mass", "jupiter_mass", "solar_mass"), ("mass", "solar_mass", "jupiter_mass"),
    ("radius", "earth_radius", "jupiter_radius"), ("radius", "jupiter_radius", "earth_radius"),
    ("radius", "jupiter_radius", "solar_radius"), ("radius", "solar_radius", "jupiter_radius"),
    ("radius", "m", "km"), ("radius", "km", "m"), ("mass", "g", "kg"), ("mass", "kg", "g"),
)
_UNIT_WORDS = {"m": "metres", "km": "km", "g": "grams", "kg": "kg", "earth_mass": "Earth masses",
               "jupiter_mass": "Jupiter masses", "solar_mass": "solar masses",
               "earth_radius": "Earth radii", "jupiter_radius": "Jupiter radii",
               "solar_radius": "solar radii"}


def slip_factor(given: str, read_as: str) -> float:
    """How many times too large a value in ``given`` comes out when read as ``read_as``."""
    return UNITS[read_as].to_si / UNITS[given].to_si


def slip_text(field: str, given: str, read_as: str) -> str:
    """The hint for one slip, said the way round it happened: '318x too small' rather than
    '0.003146x too large'."""
    factor = slip_factor(given, read_as)
    size = f"{factor:.4g}x too large" if factor >= 1 else f"{1 / factor:.4g}x too small"
    return (f"{field} looks {size} (values in {_UNIT_WORDS[given]} read as "
            f"{_UNIT_WORDS[read_as]}?)")


SLIP_TOLERANCE = 10.0  # a slip is suspected only when the density misses its band by > 10x


def unit_slip_hint(density: pl.Expr) -> pl.Expr:
    """Every unit slip that would explain ``density`` (astronomical units first), as text joined
    by "; or ", when it misses its band by more than 10x and dividing by one known factor brings
    it inside; null otherwise."""
    low, high = band_low(), band_high()
    far_out = ((density < low / SLIP_TOLERANCE) | (density > high * SLIP_TOLERANCE)) \
        & ~degenerate_star()
    hints = []
    for field, given, read_as in UNIT_SLIPS:
        factor = slip_factor(given, read_as)
        fixed = density / (factor if field == "mass" else factor**-3)
        hints.append(pl.when((fixed >= low) & (fixed <= high))
                     .then(pl.lit(slip_text(field, given, read_as))))
    joined = pl.concat_str(hints, separator="; or ", ignore_nulls=True)
    # far_out once, outside the twelve slips: inside each of them polars computed it (and the
    # white-dwarf curve it reads) twelve times, 0.3 s a partition of 250,000 bodies
    return pl.when(far_out & (joined != "")).then(joined)
