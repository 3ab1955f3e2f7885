"""The ring columns of the derived context: each ring's edges in metres, its planet, the Roche
limits for its material, the density its outer edge implies, and the ring around each moon.

A ring is a row of the ``ring`` family whose parent is its planet, or ring columns on the
planet's own row; both give the same columns, so one set of rules judges both. Edges given in
radii of the ring's planet (``units.PLANET_RADII`` names them) become metres here, where that
planet's radius is known: the row's own radius on a planet, the parent's on a ring.
"""

from __future__ import annotations

import polars as pl

from bodycensus.science.families import RING_FAMILIES
from bodycensus.science.physics import bodies, orbits
from bodycensus.science.units import PLANET_RADII

# Ring particles are water ice (Cuzzi et al. 2010, from memory); a ring of unknown material is
# judged as solid ice, the lightest common ring material, so with the widest Roche limit.
ASSUMED_RING_DENSITY = bodies.WATER_ICE_DENSITY

# The derived column that holds each relative field in metres (what a page shows as its SI value).
IN_METRES: dict[str, str] = {"ring_inner": "ring_inner_edge", "ring_outer": "ring_outer_edge"}

_IS_RING = pl.col("family").is_in(sorted(RING_FAMILIES)).fill_null(False)


def _in_planet_radii(field: str) -> pl.Expr:
    """Whether this row gives ``field`` in radii of the ring's planet."""
    return pl.col(PLANET_RADII).str.split(",").list.contains(field).fill_null(False)


def _edge(field: str, planet_radius: pl.Expr) -> pl.Expr:
    """A ring edge in metres (null where absent or not positive)."""
    value = pl.when(pl.col(field) > 0).then(pl.col(field))
    return pl.when(_in_planet_radii(field)).then(value * planet_radius).otherwise(value)


def own_ring_edges(table: pl.LazyFrame) -> pl.LazyFrame:
    """Edges (m) of the ring a planet's row carries, for its moons to see through the parent
    join (``_ring_inner_m``, ``_ring_outer_m``; null on ring rows, whose planet is the parent)."""
    own = pl.col("_radius")
    return table.with_columns(
        pl.when(~_IS_RING).then(_edge("ring_inner", own)).alias("_ring_inner_m"),
        pl.when(~_IS_RING).then(_edge("ring_outer", own)).alias("_ring_outer_m"),
    )


def ring_columns(table: pl.LazyFrame) -> pl.LazyFrame:
    """Per row that is or carries a ring (null elsewhere): its edges, its planet's radius,
    density and Hill radius, the Roche limits for its material and the density its outer edge
    implies."""
    has_ring = _IS_RING | pl.col("ring_inner").is_not_null() | pl.col("ring_outer").is_not_null()

    def of_planet(on_ring: str, on_planet: str) -> pl.Expr:
        return pl.when(_IS_RING).then(pl.col(on_ring)).otherwise(pl.col(on_planet))

    material = pl.when(pl.col("ring_density") > 0).then(pl.col("ring_density"))
    table = table.with_columns(
        has_ring.alias("_has_ring"),
        of_planet("parent_radius", "_radius").alias("ring_planet_radius"),
        of_planet("parent_density", "_trusted_density").alias("_ring_planet_density"),
        of_planet("parent_hill_radius", "hill_radius").alias("_ring_planet_hill"),
        pl.when(_IS_RING).then(_edge("ring_inner", pl.col("parent_radius")))
        .otherwise(pl.col("_ring_inner_m")).alias("ring_inner_edge"),
        pl.when(_IS_RING).then(_edge("ring_outer", pl.col("parent_radius")))
        .otherwise(pl.col("_ring_outer_m")).alias("ring_outer_edge"),
        material.fill_null(ASSUMED_RING_DENSITY).alias("_ring_material"),
        material.is_null().alias("_ring_material_assumed"),
    )
    radius, density = pl.col("ring_planet_radius"), pl.col("_ring_planet_density")
    stuff, edge = pl.col("_ring_material"), pl.col("ring_outer_edge")
    columns = {
        "ring_roche_rigid": orbits.roche_rigid(radius, density, stuff),
        "ring_roche_fluid": orbits.roche_fluid(radius, density, stuff),
        "ring_implied_density": orbits.roche_density(radius, density, edge,
                                                     orbits.FLUID_ROCHE_COEFFICIENT),
        "ring_roche_x": (density / stuff) ** (1.0 / 3.0),
        "ring_roche_y": edge / radius,
    }
    only_rings = ("ring_planet_radius", "_ring_planet_density", "_ring_planet_hill")
    return table.with_columns(
        *[pl.when(pl.col("_has_ring")).then(expr).alias(name) for name, expr in columns.items()],
        *[pl.when(pl.col("_has_ring")).then(pl.col(name)).alias(name) for name in only_rings])


_AROUND = ("ring_around", "_ring_around_inner", "_ring_around_outer")


def rings_around(table: pl.LazyFrame) -> pl.LazyFrame:
    """For each orbiting body, the ring whose span holds its semi-major axis: a ring row of the
    same parent (joined within the system) or the parent's own ring columns. A span without an
    inner edge reaches down to the planet."""
    rings = (table.filter(_IS_RING & pl.col("parent").is_not_null()
                          & pl.col("ring_outer_edge").is_not_null())
             .select("parent", pl.col("id").alias(_AROUND[0]),
                     pl.coalesce("ring_inner_edge", "ring_planet_radius").alias(_AROUND[1]),
                     pl.col("ring_outer_edge").alias(_AROUND[2])))
    moons = table.filter(~_IS_RING & pl.col("_a").is_not_null()).select("_row", "parent", "_a")
    inside = (moons.join(rings, on="parent", how="inner")
              .filter((pl.col("_a") >= pl.col(_AROUND[1])) & (pl.col("_a") <= pl.col(_AROUND[2])))
              .group_by("_row").agg(pl.col(c).sort_by(_AROUND[2]).first() for c in _AROUND))
    # the three columns beside the table in its row order (joining the wide rows gathered them)
    beside = table.select("_row").join(inside, on="_row", how="left", maintain_order="left")
    joined = pl.concat([table, beside.drop("_row")], how="horizontal")
    low, high = pl.coalesce("parent_ring_inner", "parent_radius"), pl.col("parent_ring_outer")
    within_parent = (~_IS_RING & (pl.col("_a") >= low) & (pl.col("_a") <= high)).fill_null(False)
    parent_ring = dict(zip(_AROUND, (pl.col("parent"), low, high), strict=True))
    return joined.with_columns(
        pl.when(pl.col(_AROUND[0]).is_null() & within_parent).then(parent_ring[c])
        .otherwise(pl.col(c)).alias(c) for c in _AROUND)
