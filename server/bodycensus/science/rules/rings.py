"""Rules about rings: a ring inside its planet, past the Roche limit for its material, beyond the
planet's Hill sphere, and moons orbiting within a ring's span.

A ring is a row of the ``ring`` family or ring columns on its planet's row (``ring_context``);
ring findings belong to that row. A ring's material is judged as solid water ice when not given.
"""

from __future__ import annotations

import polars as pl

from bodycensus.science.rules.base import Rule, fmt, say
from bodycensus.science.rules.orbit import OrbitSettings

_INNER, _OUTER = pl.col("ring_inner_edge"), pl.col("ring_outer_edge")
_PLANET_RADIUS = pl.col("ring_planet_radius")
_ROCHE_SOURCE = "Roche 1849 (fluid, 2.44): inside it ring particles cannot gather into moons"


def _far(expr: pl.Expr, reference: pl.Expr) -> pl.Expr:
    """A distance in km or au, by the size of ``reference``."""
    return say(expr, "distance", reference)


def _inside_planet() -> Rule:
    ratio = _INNER / _PLANET_RADIUS
    return Rule(
        id="ring-inside-planet", title="A ring reaches inside its planet", severity="impossible",
        source="geometry: a ring's inner edge below its planet's radius",
        needs=("ring_inner_edge", "ring_planet_radius"), value=ratio, limit=pl.lit(1.0),
        unit="x planet radius", direction="below", scope="ring",
        message=pl.format("ring inner edge {} is inside the planet (radius {})",
                          _far(_INNER, _PLANET_RADIUS), _far(_PLANET_RADIUS, _PLANET_RADIUS)),
    )


def _beyond_roche(settings: OrbitSettings) -> Rule:
    ratio = _OUTER / pl.col("ring_roche_fluid")
    material = pl.when(pl.col("_ring_material_assumed")).then(
        pl.format("{} (ice, assumed)", say(pl.col("_ring_material"), "density"))).otherwise(
        say(pl.col("_ring_material"), "density"))
    return Rule(
        id="ring-beyond-roche", title="A ring reaches past the fluid Roche limit of its material",
        severity="suspect", source=_ROCHE_SOURCE + "; tolerance for porous particles (see "
                                                   "OrbitSettings.ring_roche_tolerance)",
        needs=("ring_outer_edge", "ring_roche_fluid"), value=ratio,
        limit=pl.lit(settings.ring_roche_tolerance), unit="x fluid Roche limit", scope="ring",
        message=pl.format("outer edge {} is {}x the fluid Roche limit {} for {}; the edge "
                          "implies {}", _far(_OUTER, _OUTER), fmt(ratio),
                          _far(pl.col("ring_roche_fluid"), _OUTER), material,
                          say(pl.col("ring_implied_density"), "density")),
    )


def _beyond_hill() -> Rule:
    ratio = _OUTER / pl.col("_ring_planet_hill")
    return Rule(
        id="ring-beyond-hill", title="A ring reaches beyond its planet's Hill sphere",
        severity="impossible", source="Hill sphere r_H = a(1-e)(m/3M)^(1/3) (Hill 1878)",
        needs=("ring_outer_edge", "_ring_planet_hill"), value=ratio, limit=pl.lit(1.0),
        unit="x planet Hill radius", scope="ring",
        message=pl.format("ring outer edge {} is {}x the planet's Hill radius {}",
                          _far(_OUTER, _OUTER), fmt(ratio),
                          _far(pl.col("_ring_planet_hill"), _OUTER)),
    )


def _moon_in_ring() -> Rule:
    a, low, high = pl.col("_a"), pl.col("_ring_around_inner"), pl.col("_ring_around_outer")
    return Rule(
        id="moon-in-ring", title="A moon orbits within a ring's span", severity="note",
        source="ring geometry: the moon's semi-major axis between the ring's edges (a moon there "
               "opens a gap, as Pan and Daphnis do in Saturn's A ring)",
        needs=("_a", "ring_around"), value=a, limit=high, unit="m", quantity="distance",
        direction="none", fires=pl.lit(True), scope="orbit",
        message=pl.format("orbits at {}, within the ring of '{}' ({} to {})", _far(a, high),
                          pl.col("ring_around"), _far(low, high), _far(high, high)),
    )


def ring_rules(settings: OrbitSettings) -> tuple[Rule, ...]:
    """Every ring rule."""
    return (_inside_planet(), _beyond_roche(settings), _beyond_hill(), _moon_in_ring())
