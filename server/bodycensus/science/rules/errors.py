"""Rules of severity ``error``: the data itself is broken (missing, unreadable, inconsistent)."""

from __future__ import annotations

import polars as pl

from bodycensus.science.families import RING_FAMILIES
from bodycensus.science.rules.bands import band_high, band_low
from bodycensus.science.rules.base import Rule, fmt, say
from bodycensus.science.units import FIELD_DIMENSIONS, SI_UNIT

_NONE = pl.lit(None, dtype=pl.Float64)
_POSITIVE_FIELDS = ("mass", "radius", "semi_major_axis", "period", "rotation_period",
                    "ring_inner", "ring_outer", "ring_mass", "ring_density")
_DATA = "data integrity (bodycensus input contract)"


def _missing_value() -> Rule:
    readable = pl.col("_bad").is_null()
    ring = pl.col("family").is_in(sorted(RING_FAMILIES)).fill_null(False)
    no_id = pl.col("id").is_null() | (pl.col("id").str.strip_chars() == "")
    no_size = ~ring & pl.col("mass").is_null() & pl.col("radius").is_null() & readable
    # a semi-major axis derived from the period and the parent's mass is not missing
    no_orbit = (~ring & pl.col("parent").is_not_null() & pl.col("semi_major_axis").is_null()
                & pl.col("orbit_derived").is_null() & readable)
    no_planet = ring & pl.col("parent").is_null()
    no_outer = (pl.col("_has_ring") & pl.col("ring_outer").is_null() & readable)
    parts = [pl.when(no_id).then(pl.lit("no id")),
             pl.when(no_size).then(pl.lit("neither mass nor radius")),
             pl.when(no_orbit).then(pl.lit("a parent but no semi-major axis (nor a period and "
                                           "a parent mass to derive it from)")),
             pl.when(no_planet).then(pl.lit("a ring but no parent planet")),
             pl.when(no_outer).then(pl.lit("a ring but no outer edge"))]
    return Rule(
        id="missing-value", title="A required value is missing", severity="error", source=_DATA,
        needs=(), value=_NONE, limit=_NONE, unit="", direction="none",
        fires=no_id | no_size | no_orbit | no_planet | no_outer,
        message=pl.concat_str(parts, separator="; ", ignore_nulls=True), scope="error",
    )


def _bad_cell() -> Rule:
    return Rule(  # every row is judged: a row without an unreadable cell passes
        id="bad-cell", title="A cell could not be read as a number", severity="error",
        source=_DATA, needs=(), value=_NONE, limit=_NONE, unit="", direction="none",
        fires=pl.col("_bad").is_not_null(),
        message=pl.format("unreadable or non-finite value in: {}", pl.col("_bad")), scope="error",
    )


def _not_positive(field: str) -> pl.Expr:
    """The field is zero or negative (a zero mass with an uncertainty is an upper limit)."""
    bad = pl.col(field) <= 0
    return bad & ~pl.col("_mass_upper_limit") if field == "mass" else bad


def _non_positive() -> Rule:
    offending = [pl.when(_not_positive(f)).then(pl.lit(f)) for f in _POSITIVE_FIELDS]
    first_bad = pl.coalesce([pl.when(_not_positive(f)).then(pl.col(f)) for f in _POSITIVE_FIELDS])
    its_unit = pl.coalesce([pl.when(_not_positive(f)).then(pl.lit(SI_UNIT[FIELD_DIMENSIONS[f]]))
                            for f in _POSITIVE_FIELDS])
    return Rule(
        id="non-positive", title="A size, distance or time is zero or negative",
        severity="error", source=_DATA, needs=(), value=first_bad, limit=pl.lit(0.0),
        unit=its_unit,
        direction="none", fires=pl.any_horizontal([_not_positive(f) for f in _POSITIVE_FIELDS]),
        message=pl.format("must be positive: {}",
                          pl.concat_str(offending, separator=", ", ignore_nulls=True)),
        scope="error",
    )


def _duplicate_id() -> Rule:
    return Rule(
        id="duplicate-id", title="Two or more rows share an id", severity="error", source=_DATA,
        needs=("id",), value=pl.col("_id_count").cast(pl.Float64), limit=pl.lit(1.0), unit="rows",
        message=pl.format("id '{}' appears on {} rows", pl.col("id"), pl.col("_id_count")),
        scope="error",
    )


def _orphan_parent() -> Rule:
    return Rule(
        id="orphan-parent", title="The parent named is not in the catalogue", severity="error",
        source=_DATA, needs=(), value=_NONE, limit=_NONE, unit="", direction="none",
        fires=pl.col("parent").is_not_null() & pl.col("_parent_exists").is_null(),
        message=pl.format("parent '{}' is not in the catalogue", pl.col("parent")), scope="error",
    )


def _parent_cycle() -> Rule:
    return Rule(
        id="parent-cycle", title="The chain of parents loops", severity="error", source=_DATA,
        needs=(), value=_NONE, limit=_NONE, unit="", direction="none",
        fires=pl.col("parent").is_not_null() & pl.col("_in_cycle"),
        message=pl.format("following parents from '{}' never reaches a root (loop via '{}')",
                          pl.col("id"), pl.col("parent")),
        scope="error",
    )


def _unit_slip() -> Rule:
    density, hint = pl.col("density"), pl.col("_slip_hint")
    nearer = pl.when(density < band_low()).then(band_low()).otherwise(band_high())
    return Rule(
        id="unit-slip", title="A value looks off by a unit factor", severity="error",
        source="unit factors: IAU 2015 B3 nominal masses and radii; factor 1000 (k-prefix)",
        needs=("density", "_band_low"), value=density, limit=nearer, unit="kg/m3",
        quantity="density", direction="none", fires=hint.is_not_null(),
        message=pl.format("density {} is far outside its family's band {} to {}; {}",
                          say(density, "density", nearer), say(band_low(), "density", nearer),
                          say(band_high(), "density", nearer), hint),
        scope="error",
    )


def _bad_eccentricity() -> Rule:
    """A negative eccentricity is broken data (error); one of 1 or more is an unbound orbit, as
    interstellar objects on hyperbolic paths have (a note): the orbit rules skip both."""
    e = pl.col("eccentricity")
    unbound = (e >= 1).fill_null(False)
    return Rule(
        id="bad-eccentricity", title="Eccentricity outside [0, 1): broken, or an unbound orbit",
        severity="error", source="bound Keplerian orbits have 0 <= e < 1 (orbital mechanics)",
        needs=("eccentricity",), value=e, limit=pl.when(e < 0).then(0.0).otherwise(1.0), unit="",
        direction="none", fires=(e < 0) | (e >= 1), scope="error",
        severity_expr=pl.when(unbound).then(pl.lit("note")).otherwise(pl.lit("error")),
        also=("note",),
        message=pl.when(unbound).then(pl.format("eccentricity {}: an unbound (hyperbolic) orbit",
                                                fmt(e)))
        .otherwise(pl.format("eccentricity {} is not in [0, 1)", fmt(e))),
    )


def _ring_edges_reversed() -> Rule:
    inner, outer = pl.col("ring_inner_edge"), pl.col("ring_outer_edge")
    return Rule(
        id="ring-edges-reversed", title="A ring's outer edge is not beyond its inner edge",
        severity="error", source=_DATA, needs=("ring_inner_edge", "ring_outer_edge"),
        value=outer, limit=inner, unit="m", quantity="distance", direction="none",
        fires=outer <= inner, scope="ring",
        message=pl.format("ring outer edge {} is not beyond its inner edge {}",
                          say(outer, "distance", inner), say(inner, "distance", inner)),
    )


def error_rules() -> tuple[Rule, ...]:
    """Every data-integrity rule."""
    return (_missing_value(), _bad_cell(), _non_positive(), _duplicate_id(), _orphan_parent(),
            _parent_cycle(), _unit_slip(), _bad_eccentricity(), _ring_edges_reversed())
