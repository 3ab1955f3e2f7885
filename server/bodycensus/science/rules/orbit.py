"""Rules about a body's orbit: Roche limits, Hill spheres, Kepler's law, siblings, tidal locking.

Orbit rules use the periapsis a(1 - e) and their findings belong to the orbiting body.
"""

from __future__ import annotations

from dataclasses import dataclass

import polars as pl

from bodycensus.science.families import FLUID_FAMILIES, SOLID_FAMILIES, STELLAR_FAMILIES
from bodycensus.science.physics import orbits
from bodycensus.science.rules.base import Rule, fmt, say
from bodycensus.science.rules.uncertainty_context import kepler_sigma


@dataclass(frozen=True)
class OrbitSettings:
    """Tunable thresholds of the orbit rules, with their defaults."""

    # Bodies at least this large are held together by gravity, not material strength, so the
    # rigid Roche limit is binding (roundness sets in at ~200-300 km; Lineweaver & Norman 2010).
    gravity_bound_radius: float = 200e3  # m
    # `kepler-mismatch` allows 3 standard deviations of period / Kepler period, from the
    # uncertainties of a (or its printed precision), the host's mass and the period (common
    # practice), never less than kepler_tolerance and never more than kepler_max_tolerance:
    # every mismatch over 20 % in two published catalogues was a real error (issue 12).
    kepler_tolerance: float = 0.05
    kepler_max_tolerance: float = 0.20
    kepler_sigmas: float = 3.0
    # A host mass without an uncertainty is taken as known to 10 %, typical of planet hosts
    # (issue 12's reading of two catalogues; common practice).
    host_mass_uncertainty: float = 0.10
    lock_time_factor: float = 10.0  # tidal Q and rigidity are uncertain by ~10x (common practice)
    # Pairs lighter than this mass ratio are planet and host, not a binary, even when their
    # barycentre lies outside the host (Sun-Jupiter: q = 0.001); Pluto-Charon has q = 0.12.
    binary_mass_ratio: float = 0.01  # common practice
    # How far past the fluid Roche limit for its material a ring's outer edge may reach before
    # it is suspect: ring particles are porous aggregates lighter than solid ice, and Saturn's A
    # ring's outer edge lies at 1.06x the limit for solid ice (it implies 770 kg m-3; computed
    # from JPL SSD and PDS Rings Node values). 1.2x is 0.58x the material's density (chosen here).
    ring_roche_tolerance: float = 1.2
    # A decaying orbit with less than this fraction of its system's age left is `unstable`: a
    # snapshot caught in the last 1 % of a state is a 1-in-100 coincidence (Patra et al. 2017 call
    # WASP-12b's last ~0.2 % "an unlikely coincidence"); the threshold is chosen here.
    short_life_fraction: float = 0.01
    # Real mass-transferring binaries fill their Roche lobe to 1.04-1.08 in published catalogues
    # (issue 12): the lobe fit is good to 1 % (Eggleton 1983) but stellar radii only to a few
    # per cent, so a pair is `unstable` beyond 1.1x (common practice).
    roche_lobe_tolerance: float = 1.1
    # Two bodies of one parent whose periods agree within 1 % (and masses within 2x) are one
    # body listed twice (issue 12: published duplicates agreed within 0.1-1 %; common practice).
    duplicate_period_tolerance: float = 0.01


_A, _PERI, _APO = pl.col("_a"), pl.col("periapsis"), pl.col("apoapsis")
_NOT_STELLAR = frozenset({"iron", "rock", "rock_ice", "ice", "ocean", "minor", "gas_giant",
                          "ice_giant", "brown_dwarf", "unknown"})
_SELF_LUMINOUS = STELLAR_FAMILIES | {"brown_dwarf"}  # pairs whose mass transfer Eggleton describes
_ROCHE_SOURCE = "Roche 1849 (fluid, 2.44); Shu 1982 The Physical Universe (rigid, 1.26)"


def _far(expr: pl.Expr, reference: pl.Expr) -> pl.Expr:
    """A distance in km or au, by the size of ``reference`` (the rule's limit)."""
    return say(expr, "distance", reference)


def _periapsis_inside_parent() -> Rule:
    limit = pl.col("parent_radius") + pl.col("_radius").fill_null(0.0)
    return Rule(
        id="periapsis-inside-parent", title="The orbit passes through the parent",
        severity="impossible", source="geometry: periapsis a(1-e) below the sum of radii",
        needs=("periapsis", "parent_radius"), value=_PERI, limit=limit, unit="m",
        quantity="distance", direction="below", scope="orbit",
        message=pl.format("periapsis {} is inside the parent (radius {} plus its own)",
                          _far(_PERI, limit), _far(pl.col("parent_radius"), limit)),
    )


def _inside_rigid_roche(settings: OrbitSettings) -> Rule:
    big = pl.col("_radius") >= settings.gravity_bound_radius
    return Rule(
        id="inside-rigid-roche", title="Inside the rigid-body Roche limit", severity="impossible",
        source=_ROCHE_SOURCE + "; gravity-bound above ~200 km (Lineweaver & Norman 2010)",
        needs=("periapsis", "roche_rigid", "_radius"), value=_PERI, limit=pl.col("roche_rigid"),
        unit="m", quantity="distance", direction="below", scope="orbit", families=_NOT_STELLAR,
        severity_expr=pl.when(big).then(pl.lit("impossible")).otherwise(pl.lit("unstable")),
        also=("unstable",),
        message=pl.format("periapsis {} is inside the rigid Roche limit {}",
                          _far(_PERI, pl.col("roche_rigid")),
                          _far(pl.col("roche_rigid"), pl.col("roche_rigid"))),
    )


def _inside_fluid_roche() -> Rule:
    fluid = pl.col("family").is_in(sorted(FLUID_FAMILIES))
    return Rule(
        id="inside-fluid-roche", title="Inside the fluid-body Roche limit", severity="note",
        source=_ROCHE_SOURCE, needs=("periapsis", "roche_fluid", "roche_rigid"), value=_PERI,
        limit=pl.col("roche_fluid"), unit="m", quantity="distance", direction="below",
        scope="orbit", fires=(_PERI < pl.col("roche_fluid")) & (_PERI >= pl.col("roche_rigid")),
        families=_NOT_STELLAR - {"brown_dwarf"},  # roche-lobe-overflow judges brown dwarfs
        severity_expr=pl.when(fluid).then(pl.lit("unstable")).otherwise(pl.lit("note")),
        also=("unstable",),
        message=pl.format("periapsis {} is inside the fluid Roche limit {}",
                          _far(_PERI, pl.col("roche_fluid")),
                          _far(pl.col("roche_fluid"), pl.col("roche_fluid"))),
    )


def _roche_lobe_overflow(settings: OrbitSettings) -> Rule:
    mass, parent_mass = pl.col("_mass"), pl.col("parent_mass")
    own = pl.col("_radius") / orbits.roche_lobe_radius(_PERI, mass / parent_mass)
    primary = pl.col("parent_radius") / orbits.roche_lobe_radius(_PERI, parent_mass / mass)
    fill = pl.max_horizontal(own, primary)
    return Rule(
        id="roche-lobe-overflow", title="A star of the pair overfills its Roche lobe",
        severity="unstable", source="Eggleton 1983, ApJ 268, 368 (Roche-lobe radius)",
        needs=("periapsis", "_mass", "parent_mass", "_radius", "parent_radius"), value=fill,
        limit=pl.lit(settings.roche_lobe_tolerance), unit="lobe fill", scope="orbit",
        families=_SELF_LUMINOUS,
        fires=(fill > settings.roche_lobe_tolerance)
        & pl.col("parent_family").is_in(sorted(_SELF_LUMINOUS)),
        message=pl.format("at periapsis the {} fills {}x its Roche lobe",
                          pl.when(own >= primary).then(pl.lit("body")).otherwise(
                              pl.lit("primary")), fmt(fill)),
    )


def _hill_rules() -> tuple[Rule, Rule]:
    ratio = _A / pl.col("parent_hill_radius")
    outside = Rule(
        id="outside-hill-sphere", title="Orbit beyond the parent's Hill sphere",
        severity="impossible", source="Hill sphere r_H = a(1-e)(m/3M)^(1/3) (Hill 1878)",
        needs=("_a", "parent_hill_radius"), value=ratio, limit=pl.lit(1.0),
        unit="x parent Hill radius", scope="orbit",
        message=pl.format("semi-major axis is {}x the parent's Hill radius", fmt(ratio)),
    )
    stable_fraction = pl.col("stable_hill_limit") / pl.col("parent_hill_radius")
    sense = pl.when(pl.col("_retrograde")).then(pl.lit("retrograde")).otherwise(
        pl.lit("prograde"))
    beyond = Rule(
        id="beyond-stable-hill", title="Beyond the stable part of the Hill sphere",
        severity="unstable",
        source="Domingos, Winter & Yokoyama 2006, MNRAS 373, 1227 (a_crit prograde ~0.49, "
               "retrograde ~0.93 r_H)",
        needs=("_a", "stable_hill_limit", "parent_hill_radius"), value=ratio,
        limit=stable_fraction, unit="x parent Hill radius", scope="orbit",
        fires=(ratio > stable_fraction) & (ratio <= 1.0),
        message=pl.format("semi-major axis is {}x the parent's Hill radius; {} orbits are "
                          "stable to {}x", fmt(ratio), sense, fmt(stable_fraction)),
    )
    return outside, beyond


def _kepler_mismatch(settings: OrbitSettings) -> Rule:
    """The tolerance follows from the uncertainties (``uncertainty_context.kepler_sigma``),
    within the settings' floor and ceiling; the message says how it was set."""
    ratio = pl.col("period_ratio")
    sigma = kepler_sigma(settings.host_mass_uncertainty)
    tol = (settings.kepler_sigmas * sigma).clip(settings.kepler_tolerance,
                                                settings.kepler_max_tolerance)
    host = pl.when(pl.col("parent_mass_error").is_null()).then(
        pl.lit(f"; host mass taken as known to {settings.host_mass_uncertainty:.0%}"))
    return Rule(
        id="kepler-mismatch", title="Period contradicts Kepler's third law", severity="suspect",
        source="Kepler's third law, P = 2 pi sqrt(a^3 / G(M+m)); tolerance from the "
               "uncertainties (first-order propagation)",
        needs=("period_ratio",), value=ratio,
        limit=pl.when(ratio < 1).then(1 - tol).otherwise(1 + tol), unit="x Kepler period",
        direction="none", fires=(ratio - 1).abs() > tol, scope="orbit",
        message=pl.concat_str(
            pl.lit("period is "), fmt(ratio), pl.lit("x the Kepler period "),
            say(pl.col("kepler_period"), "period"), pl.lit(" (tolerance "),
            fmt(100.0 * tol), pl.lit("%"), host.fill_null(pl.lit("")), pl.lit(")")),
    )


def _sibling_rules() -> tuple[Rule, Rule]:
    crossing = Rule(
        id="crossing-orbits", title="Orbit crosses the next sibling inward", severity="unstable",
        source="orbit geometry: inner apoapsis a(1+e) beyond outer periapsis a(1-e)",
        needs=("inner_apoapsis", "periapsis"), value=pl.col("inner_apoapsis"), limit=_PERI,
        unit="m", quantity="distance", scope="orbit",
        message=pl.format("inner sibling '{}' reaches {}, beyond this periapsis {}",
                          pl.col("inner_id"), _far(pl.col("inner_apoapsis"), _PERI),
                          _far(_PERI, _PERI)),
    )
    mutual = orbits.mutual_hill_radius(pl.col("inner_a"), pl.col("inner_mass"), pl.col("_mass"),
                                       pl.col("parent_mass"))
    spacing = (_A - pl.col("inner_a")) / mutual
    spaced = Rule(
        id="hill-spacing", title="Too close to its inner sibling to be Hill-stable",
        severity="unstable", source="Gladman 1993, Icarus 106, 247 (2 sqrt(3) mutual Hill radii)",
        needs=("inner_a", "inner_mass", "_mass", "parent_mass", "_a"), value=spacing,
        limit=pl.lit(orbits.HILL_STABLE_SEPARATION), unit="mutual Hill radii",
        direction="below", scope="orbit",
        fires=(spacing < orbits.HILL_STABLE_SEPARATION)
        & (pl.col("inner_apoapsis") <= _PERI).fill_null(True),
        message=pl.format("only {} mutual Hill radii from inner sibling '{}'", fmt(spacing),
                          pl.col("inner_id")),
    )
    return crossing, spaced


def _duplicate_orbit(settings: OrbitSettings) -> Rule:
    """The same body listed twice under one parent: its period (or, without periods, a^1.5)
    within ``duplicate_period_tolerance`` of its inner sibling's, and masses within 2x where
    both are known (co-orbital moons such as Janus and Epimetheus differ 3.6x in mass)."""
    by_period = pl.col("period") / pl.col("inner_period")
    ratio = pl.coalesce(by_period, (_A / pl.col("inner_a")) ** 1.5)
    masses = pl.col("_mass") / pl.col("inner_mass")
    alike = ((masses < 2.0) & (masses > 0.5)).fill_null(True)
    tol = settings.duplicate_period_tolerance
    return Rule(
        id="duplicate-orbit", title="The same orbit as its inner sibling: listed twice?",
        severity="suspect",
        source="Kepler's third law: one orbit, one period; periods within 1 % and masses within "
               "2x (common practice, issue 12)",
        needs=("inner_a", "_a"), value=ratio, limit=pl.lit(1.0 + tol), unit="x sibling period",
        direction="none", scope="orbit", fires=((ratio - 1.0).abs() < tol) & alike,
        message=pl.format("period is {}x that of inner sibling '{}': the same body listed twice?",
                          fmt(ratio), pl.col("inner_id")),
    )


def _heavier_than_parent() -> Rule:
    ratio = pl.col("_mass") / pl.col("parent_mass")
    return Rule(
        id="heavier-than-parent", title="Heavier than the body it orbits", severity="suspect",
        source="hierarchy convention: the parent is the more massive body",
        needs=("_mass", "parent_mass"), value=ratio, limit=pl.lit(1.0), unit="x parent mass",
        scope="orbit", message=pl.format("mass is {}x the parent's", fmt(ratio)),
    )


def _binary_barycentre(settings: OrbitSettings) -> Rule:
    offset = pl.col("barycentre_offset")
    binary = pl.col("_mass") >= settings.binary_mass_ratio * pl.col("parent_mass")
    return Rule(
        id="binary-barycentre", title="A binary: the barycentre lies outside the parent",
        severity="note", source="two-body barycentre a m/(M+m) (Newtonian mechanics)",
        needs=("barycentre_offset", "parent_radius"), value=offset,
        limit=pl.col("parent_radius"), unit="m", quantity="distance", scope="orbit",
        fires=(offset > pl.col("parent_radius")) & binary,
        message=pl.format("barycentre is {} from the parent's centre, outside its radius {}",
                          _far(offset, pl.col("parent_radius")),
                          _far(pl.col("parent_radius"), pl.col("parent_radius"))),
    )


def _tidal_lock_age(settings: OrbitSettings) -> Rule:
    synchronous = (pl.col("rotation_period") - pl.col("period")).abs() <= 0.01 * pl.col("period")
    locked = pl.col("tidally_locked").fill_null(False) | synchronous.fill_null(False)
    ratio = pl.col("tidal_lock_time") / pl.col("age")
    return Rule(
        id="tidal-lock-age", title="Tidally locked sooner than tides allow", severity="suspect",
        source="Gladman et al. 1996, Icarus 122, 166 (despinning time, after Peale 1977)",
        needs=("tidal_lock_time", "age"), value=ratio, limit=pl.lit(settings.lock_time_factor),
        unit="x age", scope="orbit", families=SOLID_FAMILIES | (FLUID_FAMILIES - STELLAR_FAMILIES),
        fires=locked & (ratio > settings.lock_time_factor),
        message=pl.format("locked, but despinning takes {}, {}x its age",
                          say(pl.col("tidal_lock_time"), "age"), fmt(ratio)),
    )


def orbit_rules(settings: OrbitSettings = OrbitSettings()) -> tuple[Rule, ...]:
    """Every orbit rule."""
    return (
        _periapsis_inside_parent(), _inside_rigid_roche(settings), _inside_fluid_roche(),
        _roche_lobe_overflow(settings), *_hill_rules(), _kepler_mismatch(settings),
        *_sibling_rules(), _duplicate_orbit(settings),
        _heavier_than_parent(), _binary_barycentre(settings), _tidal_lock_age(settings),
    )

