"""The tidal columns of the derived context: heat dissipated in each eccentric orbiting body, and
how long an orbit that tides shrink has left compared with its system's age.

Tidal parameters (rigidity, Q) come from each family (``families.FAMILY_PARAMETERS``); k2 is a
homogeneous elastic sphere's, so Q' = 3Q / 2k2.
"""

from __future__ import annotations

import polars as pl

from bodycensus.science.families import FAMILY_PARAMETERS, FLUID_FAMILIES
from bodycensus.science.physics import orbits, tides
from bodycensus.science.units import YEAR


def family_tides(family: pl.Expr) -> tuple[pl.Expr, pl.Expr]:
    """Rigidity (Pa) and tidal Q of a column of families (families.FAMILY_PARAMETERS)."""
    rigidity = {f: p.rigidity for f, p in FAMILY_PARAMETERS.items()}
    quality = {f: p.quality_factor for f, p in FAMILY_PARAMETERS.items()}
    return (family.replace_strict(rigidity, default=3e10, return_dtype=pl.Float64),
            family.replace_strict(quality, default=100.0, return_dtype=pl.Float64))


def _heating(table: pl.LazyFrame) -> pl.LazyFrame:
    """Tidal heat (W) and surface heat flux (W m-2) of bodies on eccentric orbits, taken as
    synchronous (Peale, Cassen & Reynolds 1979), null on circular orbits; and the distance they
    are plotted against: the semi-major axis in fluid Roche limits."""
    rigidity, quality = family_tides(pl.col("family"))
    mass, radius = pl.col("_mass"), pl.col("_radius")
    k2_over_q = orbits.love_number_k2(mass, radius, rigidity) / quality
    power = tides.tidal_heating_power(pl.col("_a"), pl.col("_e"), mass, radius,
                                      pl.col("parent_mass"), k2_over_q)
    heated = pl.when(pl.col("_e") > 0).then(power)
    return table.with_columns(tidal_heating=heated,
                              roche_distance=pl.col("_a") / pl.col("roche_fluid")).with_columns(
        tidal_heat_flux=tides.surface_heat_flux(pl.col("tidal_heating"), radius))


SYNCHRONOUS_TOLERANCE = 0.01  # periods within 1 % count as one (common practice)


def _decays() -> pl.Expr:
    """Whether the tide on the parent shrinks the orbit: inside the parent's synchronous orbit
    (orbital period shorter than the parent's rotation period; within 1 % of it, a mutually
    locked pair such as Pluto-Charon, tides no longer move the orbit), on a retrograde orbit, or
    with the parent's spin unknown (close orbits, the only short-lived ones, are mostly inside)."""
    spin = pl.when(pl.col("parent_rotation_period") > 0).then(pl.col("parent_rotation_period"))
    inside = pl.col("kepler_period") < (1.0 - SYNCHRONOUS_TOLERANCE) * spin
    return pl.col("_retrograde") | spin.is_null() | inside.fill_null(False)


def _decay(table: pl.LazyFrame) -> pl.LazyFrame:
    """Years left before a decaying orbit reaches its end: the parent's surface, or the Roche
    limit for the body (fluid for fluid families, rigid otherwise) where that is farther out;
    null for orbits that tides move outward, and for orbits already past their end."""
    rigidity, quality = family_tides(pl.col("parent_family"))
    parent_mass, parent_radius = pl.col("parent_mass"), pl.col("parent_radius")
    q_prime = tides.modified_quality_factor(
        orbits.love_number_k2(parent_mass, parent_radius, rigidity), quality)
    fluid = pl.col("family").is_in(sorted(FLUID_FAMILIES))
    roche = pl.when(fluid).then(pl.col("roche_fluid")).otherwise(pl.col("roche_rigid"))
    end = pl.max_horizontal(parent_radius + pl.col("_radius").fill_null(0.0), roche)
    years = tides.tidal_decay_time(pl.col("_a"), end, parent_mass, parent_radius,
                                   pl.col("_mass"), q_prime) / YEAR
    system_age = pl.coalesce(pl.when(pl.col("age") > 0).then(pl.col("age")),
                             pl.when(pl.col("parent_age") > 0).then(pl.col("parent_age")))
    left = pl.when(_decays() & (pl.col("_a") > end)).then(years)
    return table.with_columns(tidal_decay_time=left, _system_age=system_age).with_columns(
        life_to_age=pl.col("tidal_decay_time") / pl.col("_system_age"))


def tide_columns(table: pl.LazyFrame) -> pl.LazyFrame:
    """Tidal heating and the tidal decay time, for bodies with a parent (needs the orbit
    columns: kepler_period, roche limits)."""
    return _decay(_heating(table))
