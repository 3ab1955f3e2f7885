"""Rules about one body on its own: density, size and mass limits by family."""

from __future__ import annotations

from dataclasses import replace

import polars as pl

from bodycensus.science.families import (
    BODY_FAMILIES,
    FAMILY_PARAMETERS,
    PLANETARY_FAMILIES,
    DensityBand,
)
from bodycensus.science.physics import bodies
from bodycensus.science.rules.bands import band_edge, band_high, band_low, degenerate_star
from bodycensus.science.rules.base import Rule, fmt, say
from bodycensus.science.units import AU, M_JUPITER, M_SUN

DENSER_THAN_IRON_TOLERANCE = 1.05  # the Seager et al. 2007 fits are good to a few per cent
SIGMAS = 3.0  # standard deviations past a limit before a measured value breaks it (common practice)
OVERSIZE_FACTOR = 2.0  # inflated hot giants reach ~2 R_jup, about 2x the cold curve
# Within 0.1 au (periods of days around a Sun-like star) the hottest giants reach ~2.3 R_jup,
# ~2.5x the cold curve at their masses (issue 12: TEPCat's largest hot Jupiters; common practice)
HOT_ORBIT, HOT_OVERSIZE_FACTOR = 0.1 * AU, 2.5

_SEAGER = "Seager et al. 2007, ApJ 669, 1279 (pure-iron mass-radius fit)"
_MASS, _RADIUS, _DENSITY = pl.col("_mass"), pl.col("_radius"), pl.col("density")
_WHITE_DWARF = FAMILY_PARAMETERS["white_dwarf"].density_band or DensityBand("const", 0, "const", 0)
_BROWN_DWARF = FAMILY_PARAMETERS["brown_dwarf"].density_band or DensityBand("const", 0, "const", 0)


def _denser_than_iron() -> Rule:
    """Judged in standard deviations where the catalogue gives uncertainties (impossible beyond
    ``SIGMAS`` of the density's lower spread), else with the curve's own few-per-cent tolerance,
    and the message says which."""
    iron = bodies.composition_density(_MASS, "iron")
    spread = pl.col("_density_error")
    limit = iron * pl.when(spread.is_not_null()).then(1.0 + SIGMAS * spread).otherwise(
        DENSER_THAN_IRON_TOLERANCE)
    how = pl.when(spread.is_not_null()).then(pl.concat_str(
        pl.lit(", "), fmt((_DENSITY / iron - 1.0) / spread), pl.lit(" sigma above"))).otherwise(
        pl.lit(f", {DENSER_THAN_IRON_TOLERANCE - 1:.0%} tolerance: no uncertainty given"))
    return Rule(
        id="denser-than-iron", title="Denser than pure iron at its mass", severity="impossible",
        source=_SEAGER, needs=("density",), value=_DENSITY, limit=limit, unit="kg/m3",
        quantity="density", families=PLANETARY_FAMILIES,
        message=pl.concat_str(pl.lit("density "), say(_DENSITY, "density", iron),
                              pl.lit(" exceeds a pure-iron body of this mass ("),
                              say(iron, "density", iron), how, pl.lit(")")),
    )


def _mass_upper_limit() -> Rule:
    upper = pl.when(pl.col("mass") > 0).then(pl.col("mass") + pl.col("mass_error").abs()) \
        .otherwise(pl.col("mass_error").abs())
    return Rule(
        id="mass-upper-limit", title="The mass is an upper limit", severity="note",
        source="measurement: an uncertainty as large as the value bounds the mass from above "
               "only",
        needs=(), value=upper, limit=pl.col("mass"), unit="kg", quantity="mass",
        fires=pl.col("_mass_upper_limit"), families=BODY_FAMILIES,
        message=pl.concat_str(pl.lit("mass is an upper limit (at most "), say(upper, "mass"),
                              pl.lit("): no density is judged")),
    )


def _family_density() -> Rule:
    low, high = band_low(), band_high()
    nearer = pl.when(_DENSITY < low).then(low).otherwise(high)
    outside = (_DENSITY < low) | (_DENSITY > high)
    not_iron = _DENSITY <= DENSER_THAN_IRON_TOLERANCE * bodies.composition_density(_MASS, "iron")
    return Rule(
        id="family-density", title="Density outside the family's band at that mass",
        severity="suspect",
        source="bands from composition curves: Seager et al. 2007; cold H/He (Zapolsky & "
               "Salpeter 1969); Nauenberg 1972; stars from the largest supergiants (~1500 R_sun, "
               "Levesque et al. 2005) to hot subdwarfs (Heber 2009), main sequence R~M^0.8 "
               "(common practice)",
        needs=("density", "_band_low"), value=_DENSITY, limit=nearer, unit="kg/m3",
        quantity="density", direction="none",
        fires=outside & (~pl.col("family").is_in(sorted(PLANETARY_FAMILIES)) | not_iron)
        & pl.col("_slip_hint").is_null() & ~degenerate_star(),
        families=BODY_FAMILIES,
        message=pl.format("density {} is outside the {} band {} to {} at this mass",
                          say(_DENSITY, "density", nearer), pl.col("family"),
                          say(low, "density", nearer), say(high, "density", nearer)),
    )


def _oversized_cold_body() -> Rule:
    """Close to its star a giant is heated and inflated (to ~2.3 R_jup at short periods), so the
    limit is wider there."""
    ratio = _RADIUS / bodies.cold_hhe_radius(_MASS)
    close = (pl.col("_a") < HOT_ORBIT).fill_null(False)
    limit = pl.when(close).then(pl.lit(HOT_OVERSIZE_FACTOR)).otherwise(pl.lit(OVERSIZE_FACTOR))
    return Rule(
        id="oversized-cold-body", title="Larger than a hydrogen-helium body of its mass can be",
        severity="suspect",
        source="Burrows & Liebert 1993 (cold H/He R ~ 1 R_jup); inflated hot giants ~2 R_jup, "
               "to ~2.3 R_jup within 0.1 au (issue 12, TEPCat)",
        needs=("_mass", "_radius"), value=ratio, limit=limit,
        unit="x cold H/He radius", families=frozenset({"gas_giant", "brown_dwarf"}),
        message=pl.format("radius is {}x that of a cold H/He body of this mass", fmt(ratio)),
    )


def _mass_limit(rule_id: str, title: str, family: str, limit: float | pl.Expr, source: str,
                severity: str, direction: str = "above") -> Rule:
    """A limit on a body's mass in solar masses; ``limit`` (kg) may vary with the body."""
    in_sun = _MASS / M_SUN
    word = "above" if direction == "above" else "below"
    limit_sun = (limit if isinstance(limit, pl.Expr) else pl.lit(limit)) / M_SUN
    return Rule(
        id=rule_id, title=title, severity=severity, source=source, needs=("_mass",),
        value=in_sun, limit=limit_sun, unit="M_sun", direction=direction,
        families=frozenset({family}),
        message=pl.format("mass {} M_sun is {} the limit {} M_sun", fmt(in_sun), pl.lit(word),
                          fmt(limit_sun)),
    )


def _over_neutron_star_max() -> Rule:
    """Suspect above the heaviest neutron star measured, impossible above the causal bound; each
    finding quotes, and measures its margin from, the limit of its own severity."""
    impossible = _MASS > bodies.NEUTRON_STAR_MAX_MASS
    limit = pl.when(impossible).then(pl.lit(bodies.NEUTRON_STAR_MAX_MASS)).otherwise(
        pl.lit(bodies.NEUTRON_STAR_SUSPECT_MASS))
    # The ~3 M_sun causal bound is quoted from memory (REFERENCES.md); users see the citation.
    rule = _mass_limit("over-neutron-star-max", "Heavier than any neutron star can be",
                       "neutron_star", limit,
                       "Romani et al. 2022 (heaviest known 2.35 M_sun); Rhoades & Ruffini 1974 "
                       "(causal bound ~3 M_sun)", "suspect")
    severity = pl.when(impossible).then(pl.lit("impossible")).otherwise(pl.lit("suspect"))
    return replace(rule, severity_expr=severity, also=("impossible",))


def _degenerate_star() -> Rule:
    low = band_edge(_WHITE_DWARF, "low", _MASS)
    return Rule(
        id="degenerate-star", title="A star as dense as a white dwarf or a neutron star",
        severity="note",
        source="Nauenberg 1972, ApJ 175, 417 (white-dwarf mass-radius relation), within 20x "
               "for rounded radii; neutron stars 1e16-3e18 kg/m3",
        needs=("density",), value=_DENSITY, limit=low, unit="kg/m3", quantity="density",
        fires=degenerate_star(), families=frozenset({"star"}),
        message=pl.format("density {} is a white dwarf's or a neutron star's at this mass: a "
                          "degenerate star", say(_DENSITY, "density", low)),
    )


def _under_hydrogen_burning() -> Rule:
    """Below the hydrogen-burning limit, a body labelled as a star is most likely a brown dwarf
    with the wrong label (suspect); impossible only where its density also rules out a brown
    dwarf (denser than the brown dwarfs' band: too small for a body of that mass). A
    luminosity is not used: young brown dwarfs are bright (from memory), so it rules out little."""
    rule = _mass_limit("under-hydrogen-burning", "Star below the hydrogen-burning limit", "star",
                       bodies.HYDROGEN_BURNING_MASS,
                       "Burrows & Liebert 1993 (~0.075-0.08 M_sun)", "suspect", "below")
    too_dense = (_DENSITY > band_edge(_BROWN_DWARF, "high", _MASS)).fill_null(False)
    severity = pl.when(too_dense).then(pl.lit("impossible")).otherwise(pl.lit("suspect"))
    message = pl.concat_str(rule.message, pl.when(too_dense).then(
        pl.lit(", and too dense for a brown dwarf")).otherwise(pl.lit(": a brown dwarf?")))
    return replace(rule, severity_expr=severity, also=("impossible",), message=message)


def _brown_dwarf_range() -> Rule:
    in_jup = _MASS / M_JUPITER
    low, high = bodies.DEUTERIUM_BURNING_MASS / M_JUPITER, bodies.HYDROGEN_BURNING_MASS / M_JUPITER
    return Rule(
        id="brown-dwarf-range", title="Brown dwarf outside the deuterium-hydrogen burning range",
        severity="suspect",
        source="Spiegel, Burrows & Milsom 2011 (deuterium ~13 M_jup); Burrows & Liebert 1993",
        needs=("_mass",), value=in_jup,
        limit=pl.when(in_jup < low).then(low).otherwise(high), unit="M_jup", direction="none",
        fires=(in_jup < low) | (in_jup > high), families=frozenset({"brown_dwarf"}),
        message=pl.format("mass {} M_jup is outside {}-{} M_jup", fmt(in_jup),
                          pl.lit(f"{low:.3g}"), pl.lit(f"{high:.3g}")),
    )


def body_rules() -> tuple[Rule, ...]:
    """Every single-body rule."""
    return (
        _denser_than_iron(),
        _mass_upper_limit(),
        _family_density(),
        _oversized_cold_body(),
        _mass_limit("over-chandrasekhar", "White dwarf above the Chandrasekhar mass",
                    "white_dwarf", bodies.CHANDRASEKHAR_MASS,
                    "Chandrasekhar 1935 (1.44 M_sun for mu_e = 2)", "impossible"),
        _over_neutron_star_max(),
        _under_hydrogen_burning(),
        _degenerate_star(),
        _brown_dwarf_range(),
    )
