"""The derived-column context every rule reads: physics per body, its parent, its inner sibling.

``derive(table)`` turns the normalised table into one lazy frame with the columns listed in
DEVELOPERS.md. Inputs that are not positive are treated as absent here (``non-positive`` reports
them once), so no rule downstream fires on a negative mass.
"""

from __future__ import annotations

import math

import polars as pl

from bodycensus.science.physics import bodies, orbits
from bodycensus.science.rules.bands import band_columns, unit_slip_hint
from bodycensus.science.rules.ring_context import own_ring_edges, ring_columns, rings_around
from bodycensus.science.rules.tide_context import family_tides, tide_columns
from bodycensus.science.rules.uncertainty_context import mass_upper_limit, uncertainty_columns
from bodycensus.science.units import A_PRINTED, YEAR

_PARENT_COLUMNS = {
    "id": "parent",
    "mass": "parent_mass",
    "radius": "parent_radius",
    "_trusted_density": "parent_density",
    "family": "parent_family",
    "semi_major_axis": "parent_semi_major_axis",
    "_e": "parent_eccentricity",  # validated: 0 when absent, null when outside [0, 1)
    "parent": "grandparent",
    "rotation_period": "parent_rotation_period",
    "age": "parent_age",
    "_ring_inner_m": "parent_ring_inner",
    "_ring_outer_m": "parent_ring_outer",
    "_mass_error": "parent_mass_error",
}


def positive(name: str) -> pl.Expr:
    """The column where it is a positive number, else null."""
    column = pl.col(name)
    return pl.when(column > 0).then(column)


def _body_columns(table: pl.LazyFrame) -> pl.LazyFrame:
    """Per-body physics that needs no other row."""
    mass, radius = positive("mass"), positive("radius")
    a = positive("semi_major_axis")
    e = pl.when((pl.col("eccentricity") >= 0) & (pl.col("eccentricity") < 1)).then(
        pl.col("eccentricity")).otherwise(pl.when(pl.col("eccentricity").is_null()).then(0.0))
    inclined = pl.col("inclination") > math.pi / 2.0  # radians: beyond 90 degrees
    if A_PRINTED not in table.collect_schema():  # a table not read from text (tests, engines)
        table = table.with_columns(pl.lit(None, dtype=pl.Float64).alias(A_PRINTED))
    return own_ring_edges(table.with_columns(
        *uncertainty_columns(),
        # an upper limit of the mass gives only an upper limit of the density: none is judged
        density=pl.when(~mass_upper_limit()).then(bodies.bulk_density(mass, radius)),
        gravity=bodies.surface_gravity(mass, radius),
        gravity_g0=bodies.surface_gravity_g0(mass, radius),
        escape_speed=bodies.escape_speed(mass, radius),
        periapsis=orbits.periapsis(a, e),
        apoapsis=orbits.apoapsis(a, e),
        _a=a,
        _e=e,
        _mass=mass,
        _radius=radius,
        _retrograde=pl.coalesce("retrograde", inclined).fill_null(False),
    ))


def _with_parent(table: pl.LazyFrame) -> pl.LazyFrame:
    """Join each body's parent (first row of that id) and grandparent mass onto it."""
    parents = (
        table.filter(pl.col("id").is_not_null())
        .unique(subset="id", keep="first", maintain_order=False)
        .select(
            *[pl.col(src).alias(dst) for src, dst in _PARENT_COLUMNS.items() if src != "mass"],
            pl.col("_mass").alias("parent_mass"),
            pl.lit(True).alias("_parent_exists"),
        )
        .with_columns(
            positive("parent_semi_major_axis").alias("parent_semi_major_axis"),
            positive("parent_radius").alias("parent_radius"),
        )
    )
    grandparents = parents.select(
        pl.col("parent").alias("grandparent"), pl.col("parent_mass").alias("grandparent_mass")
    )
    return table.join(parents, on="parent", how="left").join(
        grandparents, on="grandparent", how="left"
    )


def _derived_orbits(table: pl.LazyFrame) -> pl.LazyFrame:
    """Incomplete is not broken: a body with a period and a parent of known mass but no
    semi-major axis gets one from Kepler's third law (its periapsis and apoapsis too), so the
    orbit rules judge it; ``orbit_derived`` names what was derived ("semi_major_axis", or
    "period" where the period is missing and ``kepler_period`` stands for it)."""
    period, parent_mass = positive("period"), pl.col("parent_mass")
    derived = orbits.kepler_semi_major_axis(period, parent_mass, pl.col("_mass").fill_null(0.0))
    derive_a = (pl.col("_a").is_null() & derived.is_not_null()
                & pl.col("_parent_exists")).fill_null(False)
    a = pl.when(derive_a).then(derived).otherwise(pl.col("_a"))
    return table.with_columns(
        _a=a,
        periapsis=pl.when(derive_a).then(orbits.periapsis(a, pl.col("_e")))
        .otherwise(pl.col("periapsis")),
        apoapsis=pl.when(derive_a).then(orbits.apoapsis(a, pl.col("_e")))
        .otherwise(pl.col("apoapsis")),
        orbit_derived=pl.when(derive_a).then(pl.lit("semi_major_axis")).when(
            period.is_null() & pl.col("_a").is_not_null() & parent_mass.is_not_null())
        .then(pl.lit("period")),
    )


def _orbit_columns(table: pl.LazyFrame) -> pl.LazyFrame:
    """Roche limits, Hill spheres, Kepler periods and the rest, for bodies with a parent; then
    tides, rings and the ring around each moon."""
    rigidity, quality = family_tides(pl.col("family"))
    a, e, mass, radius = pl.col("_a"), pl.col("_e"), pl.col("_mass"), pl.col("_radius")
    density = pl.col("_trusted_density")
    parent_mass, parent_radius = pl.col("parent_mass"), pl.col("parent_radius")
    parent_hill = orbits.hill_radius(pl.col("parent_semi_major_axis"),
                                     pl.col("parent_eccentricity"), parent_mass,
                                     pl.col("grandparent_mass"))
    kepler = orbits.kepler_period(a, parent_mass, mass.fill_null(0.0))
    stable = pl.when(pl.col("_retrograde")).then(
        orbits.stable_hill_fraction(pl.col("parent_eccentricity"), e, retrograde=True)).otherwise(
        orbits.stable_hill_fraction(pl.col("parent_eccentricity"), e))
    return rings_around(ring_columns(tide_columns(table.with_columns(
        roche_rigid=orbits.roche_rigid(parent_radius, pl.col("parent_density"), density),
        roche_fluid=orbits.roche_fluid(parent_radius, pl.col("parent_density"), density),
        hill_radius=orbits.hill_radius(a, e, mass, parent_mass),
        parent_hill_radius=parent_hill,
        stable_hill_limit=stable * parent_hill,
        kepler_period=kepler,
        # a semi-major axis derived from the period agrees with it by construction
        period_ratio=pl.when(pl.col("orbit_derived").fill_null("") != "semi_major_axis")
        .then(positive("period") / kepler),
        barycentre_offset=orbits.barycentre_offset(a, parent_mass, mass),
        tidal_lock_time=orbits.tidal_lock_time(a, mass, radius, parent_mass, rigidity, quality)
        / YEAR,
        roche_x=(pl.col("parent_density") / density) ** (1.0 / 3.0),
        roche_y=pl.col("periapsis") / parent_radius,
        hill_ratio=pl.col("apoapsis") / parent_hill,
    ))))


def _sibling_columns(table: pl.LazyFrame) -> pl.LazyFrame:
    """The next body inward around the same parent (siblings ordered by semi-major axis)."""
    inner = {"id": "inner_id", "_a": "inner_a", "_mass": "inner_mass", "apoapsis": "inner_apoapsis",
             "period": "inner_period"}
    return table.with_columns(
        pl.col(src).shift(1).over("parent", order_by="_a").alias(dst) for src, dst in inner.items()
    )


def _trusted(table: pl.LazyFrame) -> pl.LazyFrame:
    """Flag a density that looks like a unit slip; orbit physics must not build on it."""
    table = table.with_columns(unit_slip_hint(pl.col("density")).alias("_slip_hint"))
    return table.with_columns(
        pl.when(pl.col("_slip_hint").is_null()).then(pl.col("density")).alias("_trusted_density"))


MAD_TO_SIGMA = 0.6745  # the MAD of a normal distribution is 0.6745 sigma (Iglewicz & Hoaglin 1993)
OUTLIER_SCORES = {"_z_density": "density", "_z_mass": "_mass", "_z_radius": "_radius"}


def _robust_z(x: pl.Expr) -> pl.Expr:
    """|0.6745 (x - median) / MAD| of ``x`` within the body's label."""
    median = x.median().over("label")
    mad = (x - median).abs().median().over("label")
    return (MAD_TO_SIGMA * (x - median) / mad).abs()


def _band_position() -> pl.Expr:
    """log10 of a density over its family's high band edge at the body's mass: the edges follow
    the composition curve of each family (the main sequence for stars, iron for rocks, cold H/He
    for giants), so a label of many masses (M dwarfs and F stars among one label's hosts) scores
    each body against its own mass, not against the label's median density."""
    return (pl.col("density") / pl.col("_band_high")).log10()


def _label_statistics(table: pl.LazyFrame) -> pl.LazyFrame:
    """Robust z-scores within each label, computed over the whole table before any filter. Where
    the family has a density band, the density is scored against the band's edge at its mass
    and mass and radius are not scored apart (the band ties them together); elsewhere log10 of
    each."""
    banded = pl.col("_band_low").is_not_null()
    density = pl.when(banded).then(_band_position()).otherwise(pl.col("density").log10())
    return table.with_columns(
        _robust_z(density).alias("_z_density"),
        *[pl.when(~banded).then(_robust_z(pl.col(column).log10())).alias(score)
          for score, column in OUTLIER_SCORES.items() if score != "_z_density"],
        pl.len().over("label").alias("_label_size"),
    )


def _ids(ids: pl.Series | None) -> pl.Series:
    """Ids as a one-element list series, the form ``is_in`` takes for a set of values."""
    return (ids if ids is not None else pl.Series("id", [], dtype=pl.String)).implode()


def derive(table: pl.LazyFrame, cycle_ids: pl.Series | None = None) -> pl.LazyFrame:
    """The normalised table plus every derived column the rules and diagrams use."""
    table = table.with_columns(
        pl.col("id").count().over("id").alias("_id_count"),
        pl.col("id").is_in(_ids(cycle_ids)).alias("_in_cycle"),
    )
    with_body = _label_statistics(_trusted(_body_columns(table).with_columns(band_columns())))
    return _sibling_columns(_orbit_columns(_derived_orbits(_with_parent(with_body))))


# Working columns the rules read that are neither catalogue fields nor derived quantities to show
# (underscore-prefixed ones are working columns too).
ENGINE_COLUMNS: tuple[str, ...] = (
    "grandparent", "grandparent_mass", "parent_semi_major_axis", "parent_eccentricity",
    "inner_id", "inner_a", "inner_mass", "inner_apoapsis", "inner_period", "parent_rotation_period",
    "parent_age", "parent_ring_inner", "parent_ring_outer", "parent_mass_error",
)

DERIVED_COLUMNS: tuple[str, ...] = (
    "density", "gravity", "gravity_g0", "escape_speed", "periapsis", "apoapsis", "parent_mass",
    "parent_radius", "parent_density", "parent_family", "roche_rigid", "roche_fluid",
    "hill_radius", "parent_hill_radius", "stable_hill_limit", "kepler_period", "period_ratio",
    "barycentre_offset", "tidal_lock_time", "roche_x", "roche_y", "hill_ratio",
    "tidal_heating", "tidal_heat_flux", "roche_distance", "tidal_decay_time", "life_to_age",
    "ring_inner_edge", "ring_outer_edge", "ring_planet_radius", "ring_roche_rigid",
    "ring_roche_fluid", "ring_implied_density", "ring_roche_x", "ring_roche_y", "ring_around",
    "orbit_derived",
)
