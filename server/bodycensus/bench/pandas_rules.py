"""The 38 rules restated with pandas and numpy over the derived frame of ``pandas_context``: for
each, the rows it judges, when it fires, its severity, value and limit (the pandas reference's
third step).

Each rule is a plain function of the whole frame, vectorised; the thresholds are the engine's
own constants (imported, so a threshold is written once), the logic is written again here, from
DEVELOPERS.md's table of rules and each rule's docstring. A comparison with NaN is false, which
is what the engine's "a null verdict does not fire" gives; where the engine fills a null verdict
with true, the rule says so.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable

import numpy as np
import numpy.typing as npt
import pandas as pd

from bodycensus.bench.pandas_context import Floats, band_edge, flags, floats
from bodycensus.science.families import (
    BODY_FAMILIES,
    FAMILY_PARAMETERS,
    FLUID_FAMILIES,
    NON_STELLAR_FAMILIES,
    PLANETARY_FAMILIES,
    RING_FAMILIES,
    SOLID_FAMILIES,
    STELLAR_FAMILIES,
)
from bodycensus.science.physics import bodies, orbits
from bodycensus.science.physics.tides import IO_HEAT_FLUX
from bodycensus.science.rules.body import (
    DENSER_THAN_IRON_TOLERANCE,
    HOT_ORBIT,
    HOT_OVERSIZE_FACTOR,
    OVERSIZE_FACTOR,
    SIGMAS,
)
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.rules.statistics import MIN_LABEL_SIZE, OUTLIER_Z
from bodycensus.science.rules.uncertainty_context import A_WEIGHT, MASS_WEIGHT
from bodycensus.science.units import M_JUPITER, M_SUN

Bools = npt.NDArray[np.bool_]
Values = Floats | float
FINDING_COLUMNS = ("body", "rule", "severity", "value", "limit", "_row")
_SELF_LUMINOUS = STELLAR_FAMILIES | {"brown_dwarf"}
_POSITIVE_FIELDS = ("mass", "radius", "semi_major_axis", "period", "rotation_period",
                    "ring_inner", "ring_outer", "ring_mass", "ring_density")


def _f(t: pd.DataFrame, name: str) -> Floats:
    """A column as floats (NaN where absent)."""
    return floats(t[name])


def _b(t: pd.DataFrame, name: str) -> Bools:
    """A boolean column (absent as false)."""
    return flags(t[name])


def _in(t: pd.DataFrame, families: Iterable[str]) -> Bools:
    return np.asarray(t["family"].isin(set(families)).to_numpy(), dtype=np.bool_)


def judged(t: pd.DataFrame, scope: str, needs: Iterable[str] = (),
           families: Iterable[str] | None = None) -> Bools:
    """The rows a rule judges: error rules every row, ring rules every row that is or carries a
    ring, the others the bodies of their families (never rings); orbit rules only bodies with a
    parent, and neither ring nor orbit rules a body on a loop of parents or without an id
    (whether it is on a loop is unknown); and only where every needed column is present."""
    if families is not None:
        rows = _in(t, families)
    elif scope not in ("error", "ring"):
        rows = ~_in(t, RING_FAMILIES)
    else:
        rows = np.ones(len(t), dtype=bool)
    known = t["id"].notna().to_numpy() & ~_b(t, "_in_cycle")
    if scope == "ring":
        rows = rows & _b(t, "_has_ring") & known
    if scope == "orbit":
        rows = rows & t["parent"].notna().to_numpy() & known
    for name in needs:
        rows = rows & t[name].notna().to_numpy()
    return rows


def _found(t: pd.DataFrame, rule: str, rows: Bools, value: Values, limit: Values,
           severity: str | npt.NDArray[np.object_]) -> pd.DataFrame:
    """The findings of one rule on the rows where it fired."""
    n = len(t)
    picked = t.loc[rows]
    body = picked["id"].fillna("row " + picked["_row"].astype(str))
    return pd.DataFrame({
        "body": body.to_numpy(dtype=object), "rule": rule,
        "severity": np.broadcast_to(np.asarray(severity, dtype=object), n)[rows],
        "value": np.broadcast_to(np.asarray(value, dtype=float), n)[rows],
        "limit": np.broadcast_to(np.asarray(limit, dtype=float), n)[rows],
        "_row": picked["_row"].to_numpy()})


def _above(t: pd.DataFrame, rule: str, rows: Bools, value: Values, limit: Values,
           severity: str = "") -> pd.DataFrame:
    """A rule that fires where value > limit."""
    return _found(t, rule, rows & (value > limit), value, limit, severity)


def _ratio_above(t: pd.DataFrame, rule: str, scope: str, over: tuple[str, str], limit: float,
                 severity: str) -> pd.DataFrame:
    """A rule that fires where one column over another exceeds ``limit`` (both needed)."""
    ratio = _f(t, over[0]) / _f(t, over[1])
    return _above(t, rule, judged(t, scope, over), ratio, limit, severity)


def _nulls(n: int) -> Floats:
    return np.full(n, np.nan)


# --- errors ----------------------------------------------------------------------------------
def missing_value(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    readable = t["_bad"].isna().to_numpy()
    ring = _in(t, RING_FAMILIES)
    no_size = ~ring & t["mass"].isna().to_numpy() & t["radius"].isna().to_numpy() & readable
    no_orbit = (~ring & t["parent"].notna().to_numpy() & t["semi_major_axis"].isna().to_numpy()
                & t["orbit_derived"].isna().to_numpy() & readable)
    no_planet = ring & t["parent"].isna().to_numpy()
    no_outer = _b(t, "_has_ring") & t["ring_outer"].isna().to_numpy() & readable
    fires = t["id"].isna().to_numpy() | no_size | no_orbit | no_planet | no_outer
    return _found(t, "missing-value", judged(t, "error") & fires, np.nan, np.nan, "error")


def bad_cell(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    fires = t["_bad"].notna().to_numpy()
    return _found(t, "bad-cell", judged(t, "error") & fires, np.nan, np.nan, "error")


def non_positive(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """The first field (in ``_POSITIVE_FIELDS`` order) that is zero or negative (a zero mass with
    an uncertainty is an upper limit, not an error)."""
    first = _nulls(len(t))
    fires = np.zeros(len(t), dtype=bool)
    for field in _POSITIVE_FIELDS:
        bad = _f(t, field) <= 0
        if field == "mass":
            bad &= ~_b(t, "_mass_upper_limit")
        first = np.where(np.isnan(first) & bad, _f(t, field), first)
        fires |= bad
    return _found(t, "non-positive", judged(t, "error") & fires, first, 0.0, "error")


def duplicate_id(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    count = _f(t, "_id_count")
    return _above(t, "duplicate-id", judged(t, "error", ("id",)), count, 1.0, "error")


def orphan_parent(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    fires = t["parent"].notna().to_numpy() & ~_b(t, "_parent_exists")
    return _found(t, "orphan-parent", judged(t, "error") & fires, np.nan, np.nan, "error")


def parent_cycle(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    fires = t["parent"].notna().to_numpy() & _b(t, "_in_cycle")
    return _found(t, "parent-cycle", judged(t, "error") & fires, np.nan, np.nan, "error")


def _nearer_edge(t: pd.DataFrame) -> Floats:
    """The band edge a density is nearer: the low one below it, else the high one."""
    density, low = _f(t, "density"), _f(t, "_band_low")
    return np.where(density < low, low, _f(t, "_band_high"))


def unit_slip(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    rows = judged(t, "error", ("density", "_band_low")) & _b(t, "_slip")
    return _found(t, "unit-slip", rows, _f(t, "density"), _nearer_edge(t), "error")


def bad_eccentricity(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Negative: broken (error); 1 or more: an unbound orbit (note)."""
    e = _f(t, "eccentricity")
    rows = judged(t, "error", ("eccentricity",)) & ((e < 0) | (e >= 1))
    return _found(t, "bad-eccentricity", rows, e, np.where(e < 0, 0.0, 1.0),
                  np.where(e >= 1, "note", "error"))


def ring_edges_reversed(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    inner, outer = _f(t, "ring_inner_edge"), _f(t, "ring_outer_edge")
    rows = judged(t, "ring", ("ring_inner_edge", "ring_outer_edge")) & (outer <= inner)
    return _found(t, "ring-edges-reversed", rows, outer, inner, "error")


# --- one body --------------------------------------------------------------------------------
def denser_than_iron(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Beyond ``SIGMAS`` of the density's spread where one is given, else 5 % over iron."""
    iron = bodies.composition_density(_f(t, "_mass"), "iron")
    spread = _f(t, "_density_error")
    limit = iron * np.where(np.isnan(spread), DENSER_THAN_IRON_TOLERANCE, 1.0 + SIGMAS * spread)
    rows = judged(t, "body", ("density",), PLANETARY_FAMILIES)
    return _above(t, "denser-than-iron", rows, _f(t, "density"), limit, "impossible")


def mass_upper_limit(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    mass, error = _f(t, "mass"), np.abs(_f(t, "mass_error"))
    upper = np.where(mass > 0, mass + error, error)
    rows = judged(t, "body", (), BODY_FAMILIES) & _b(t, "_mass_upper_limit")
    return _found(t, "mass-upper-limit", rows, upper, mass, "note")


def family_density(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Outside the band (a planetary body denser than iron is denser-than-iron's, a likely unit
    slip unit-slip's, a degenerate star degenerate-star's)."""
    density, mass = _f(t, "density"), _f(t, "_mass")
    outside = (density < _f(t, "_band_low")) | (density > _f(t, "_band_high"))
    not_iron = density <= DENSER_THAN_IRON_TOLERANCE * bodies.composition_density(mass, "iron")
    fires = (outside & (~_in(t, PLANETARY_FAMILIES) | not_iron) & ~_b(t, "_slip")
             & ~_b(t, "_degenerate"))
    rows = judged(t, "body", ("density", "_band_low"), BODY_FAMILIES) & fires
    return _found(t, "family-density", rows, density, _nearer_edge(t), "suspect")


def oversized_cold_body(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    ratio = _f(t, "_radius") / bodies.cold_hhe_radius(_f(t, "_mass"))
    limit = np.where(_f(t, "_a") < HOT_ORBIT, HOT_OVERSIZE_FACTOR, OVERSIZE_FACTOR)
    rows = judged(t, "body", ("_mass", "_radius"), {"gas_giant", "brown_dwarf"})
    return _above(t, "oversized-cold-body", rows, ratio, limit, "suspect")


def over_chandrasekhar(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    rows = judged(t, "body", ("_mass",), {"white_dwarf"})
    return _above(t, "over-chandrasekhar", rows, _f(t, "_mass") / M_SUN,
                  bodies.CHANDRASEKHAR_MASS / M_SUN, "impossible")


def over_neutron_star_max(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Suspect above the heaviest measured, impossible above the causal bound."""
    mass = _f(t, "_mass")
    impossible = mass > bodies.NEUTRON_STAR_MAX_MASS
    limit = np.where(impossible, bodies.NEUTRON_STAR_MAX_MASS, bodies.NEUTRON_STAR_SUSPECT_MASS)
    rows = judged(t, "body", ("_mass",), {"neutron_star"})
    value, limit = mass / M_SUN, limit / M_SUN
    return _found(t, "over-neutron-star-max", rows & (value > limit), value, limit,
                  np.where(impossible, "impossible", "suspect"))


def under_hydrogen_burning(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Suspect (a brown dwarf labelled a star?); impossible when also denser than any brown
    dwarf of that mass."""
    mass, value = _f(t, "_mass"), _f(t, "_mass") / M_SUN
    limit = bodies.HYDROGEN_BURNING_MASS / M_SUN
    brown = FAMILY_PARAMETERS["brown_dwarf"].density_band
    assert brown is not None
    too_dense = _f(t, "density") > band_edge(brown, "high", mass)
    rows = judged(t, "body", ("_mass",), {"star"}) & (value < limit)
    return _found(t, "under-hydrogen-burning", rows, value, limit,
                  np.where(too_dense, "impossible", "suspect"))


def degenerate_star(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    white = FAMILY_PARAMETERS["white_dwarf"].density_band
    assert white is not None
    rows = judged(t, "body", ("density",), {"star"}) & _b(t, "_degenerate")
    return _found(t, "degenerate-star", rows, _f(t, "density"),
                  band_edge(white, "low", _f(t, "_mass")), "note")


def brown_dwarf_range(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    in_jup = _f(t, "_mass") / M_JUPITER
    low, high = bodies.DEUTERIUM_BURNING_MASS / M_JUPITER, bodies.HYDROGEN_BURNING_MASS / M_JUPITER
    rows = judged(t, "body", ("_mass",), {"brown_dwarf"}) & ((in_jup < low) | (in_jup > high))
    return _found(t, "brown-dwarf-range", rows, in_jup, np.where(in_jup < low, low, high),
                  "suspect")


# --- orbits ----------------------------------------------------------------------------------
def periapsis_inside_parent(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    peri = _f(t, "periapsis")
    limit = _f(t, "parent_radius") + np.nan_to_num(_f(t, "_radius"))
    rows = judged(t, "orbit", ("periapsis", "parent_radius")) & (peri < limit)
    return _found(t, "periapsis-inside-parent", rows, peri, limit, "impossible")


def inside_rigid_roche(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Impossible for a body held together by gravity (``gravity_bound_radius``), else
    unstable."""
    peri, rigid = _f(t, "periapsis"), _f(t, "roche_rigid")
    rows = judged(t, "orbit", ("periapsis", "roche_rigid", "_radius"), NON_STELLAR_FAMILIES)
    big = _f(t, "_radius") >= s.gravity_bound_radius
    return _found(t, "inside-rigid-roche", rows & (peri < rigid), peri, rigid,
                  np.where(big, "impossible", "unstable"))


def inside_fluid_roche(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Between the rigid and the fluid limit: unstable for fluid families, else a note."""
    peri, fluid, rigid = _f(t, "periapsis"), _f(t, "roche_fluid"), _f(t, "roche_rigid")
    rows = judged(t, "orbit", ("periapsis", "roche_fluid", "roche_rigid"),
                  NON_STELLAR_FAMILIES - {"brown_dwarf"}) & (peri < fluid) & (peri >= rigid)
    return _found(t, "inside-fluid-roche", rows, peri, fluid,
                  np.where(_in(t, FLUID_FAMILIES), "unstable", "note"))


def roche_lobe_overflow(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """The larger Roche-lobe fill of the pair at periapsis (Eggleton 1983)."""
    peri, mass, parent_mass = _f(t, "periapsis"), _f(t, "_mass"), _f(t, "parent_mass")
    own = _f(t, "_radius") / orbits.roche_lobe_radius(peri, mass / parent_mass)
    primary = _f(t, "parent_radius") / orbits.roche_lobe_radius(peri, parent_mass / mass)
    fill = np.fmax(own, primary)
    rows = (judged(t, "orbit", ("periapsis", "_mass", "parent_mass", "_radius", "parent_radius"),
                   _SELF_LUMINOUS)
            & t["parent_family"].isin(_SELF_LUMINOUS).to_numpy())
    return _above(t, "roche-lobe-overflow", rows, fill, s.roche_lobe_tolerance, "unstable")


def outside_hill_sphere(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    return _ratio_above(t, "outside-hill-sphere", "orbit", ("_a", "parent_hill_radius"), 1.0,
                        "impossible")


def beyond_stable_hill(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    ratio = _f(t, "_a") / _f(t, "parent_hill_radius")
    stable = _f(t, "stable_hill_limit") / _f(t, "parent_hill_radius")
    rows = (judged(t, "orbit", ("_a", "stable_hill_limit", "parent_hill_radius"))
            & (ratio > stable) & (ratio <= 1.0))
    return _found(t, "beyond-stable-hill", rows, ratio, stable, "unstable")


def kepler_mismatch(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Tolerance: ``kepler_sigmas`` standard deviations from the uncertainties of a (or its
    printed precision), the host mass (``host_mass_uncertainty`` when not given) and the
    period, within the settings' floor and ceiling."""
    ratio = _f(t, "period_ratio")
    a = np.nan_to_num(_f(t, "_a_error"))
    host = _f(t, "parent_mass_error")
    host = np.where(np.isnan(host), s.host_mass_uncertainty, host)
    period = np.nan_to_num(_f(t, "_period_error"))
    sigma = np.sqrt((A_WEIGHT * a) ** 2 + (MASS_WEIGHT * host) ** 2 + period**2)
    tol = np.clip(s.kepler_sigmas * sigma, s.kepler_tolerance, s.kepler_max_tolerance)
    rows = judged(t, "orbit", ("period_ratio",)) & (np.abs(ratio - 1) > tol)
    return _found(t, "kepler-mismatch", rows, ratio, np.where(ratio < 1, 1 - tol, 1 + tol),
                  "suspect")


def crossing_orbits(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    rows = judged(t, "orbit", ("inner_apoapsis", "periapsis"))
    return _above(t, "crossing-orbits", rows, _f(t, "inner_apoapsis"), _f(t, "periapsis"),
                  "unstable")


def hill_spacing(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Closer than 2 sqrt(3) mutual Hill radii to the inner sibling, unless the orbits cross
    (crossing-orbits says that; where either apsis is unknown, they count as not crossing)."""
    mutual = orbits.mutual_hill_radius(_f(t, "inner_a"), _f(t, "inner_mass"), _f(t, "_mass"),
                                       _f(t, "parent_mass"))
    spacing = (_f(t, "_a") - _f(t, "inner_a")) / mutual
    inner_apo, peri = _f(t, "inner_apoapsis"), _f(t, "periapsis")
    apart = np.isnan(inner_apo) | np.isnan(peri) | (inner_apo <= peri)
    rows = (judged(t, "orbit", ("inner_a", "inner_mass", "_mass", "parent_mass", "_a"))
            & (spacing < orbits.HILL_STABLE_SEPARATION) & apart)
    return _found(t, "hill-spacing", rows, spacing, orbits.HILL_STABLE_SEPARATION, "unstable")


def duplicate_orbit(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Period (else a^1.5) within ``duplicate_period_tolerance`` of the inner sibling's, masses
    within 2x where both are known."""
    by_period = _f(t, "period") / _f(t, "inner_period")
    ratio = np.where(np.isnan(by_period), (_f(t, "_a") / _f(t, "inner_a")) ** 1.5, by_period)
    masses = _f(t, "_mass") / _f(t, "inner_mass")
    alike = np.isnan(masses) | ((masses < 2.0) & (masses > 0.5))
    tol = s.duplicate_period_tolerance
    rows = judged(t, "orbit", ("inner_a", "_a")) & (np.abs(ratio - 1.0) < tol) & alike
    return _found(t, "duplicate-orbit", rows, ratio, 1.0 + tol, "suspect")


def heavier_than_parent(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    return _ratio_above(t, "heavier-than-parent", "orbit", ("_mass", "parent_mass"), 1.0,
                        "suspect")


def binary_barycentre(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    offset, radius = _f(t, "barycentre_offset"), _f(t, "parent_radius")
    binary = _f(t, "_mass") >= s.binary_mass_ratio * _f(t, "parent_mass")
    rows = judged(t, "orbit", ("barycentre_offset", "parent_radius")) & binary
    return _above(t, "binary-barycentre", rows, offset, radius, "note")


def tidal_lock_age(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Locked (flagged, or spinning within 1 % of its period) although despinning takes more
    than ``lock_time_factor`` times its age."""
    period = _f(t, "period")
    synchronous = np.abs(_f(t, "rotation_period") - period) <= 0.01 * period
    locked = _b(t, "tidally_locked") | synchronous
    ratio = _f(t, "tidal_lock_time") / _f(t, "age")
    families = SOLID_FAMILIES | (FLUID_FAMILIES - STELLAR_FAMILIES)
    rows = judged(t, "orbit", ("tidal_lock_time", "age"), families) & locked
    return _above(t, "tidal-lock-age", rows, ratio, s.lock_time_factor, "suspect")


# --- rings -----------------------------------------------------------------------------------
def ring_inside_planet(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    ratio = _f(t, "ring_inner_edge") / _f(t, "ring_planet_radius")
    rows = judged(t, "ring", ("ring_inner_edge", "ring_planet_radius")) & (ratio < 1.0)
    return _found(t, "ring-inside-planet", rows, ratio, 1.0, "impossible")


def ring_beyond_roche(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    return _ratio_above(t, "ring-beyond-roche", "ring", ("ring_outer_edge", "ring_roche_fluid"),
                        s.ring_roche_tolerance, "suspect")


def ring_beyond_hill(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    return _ratio_above(t, "ring-beyond-hill", "ring", ("ring_outer_edge", "_ring_planet_hill"),
                        1.0, "impossible")


def moon_in_ring(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    rows = judged(t, "orbit", ("_a", "ring_around"))
    return _found(t, "moon-in-ring", rows, _f(t, "_a"), _f(t, "_ring_around_outer"), "note")


# --- tides and statistics --------------------------------------------------------------------
def tidal_heating(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    rows = judged(t, "orbit", ("tidal_heat_flux",), NON_STELLAR_FAMILIES)
    return _above(t, "tidal-heating", rows, _f(t, "tidal_heat_flux"), IO_HEAT_FLUX, "note")


def short_lived_orbit(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """Unstable below ``short_life_fraction`` of the system's age, a note below one age."""
    ratio = _f(t, "life_to_age")
    short = ratio < s.short_life_fraction
    rows = judged(t, "orbit", ("life_to_age", "tidal_decay_time"), NON_STELLAR_FAMILIES)
    return _found(t, "short-lived-orbit", rows & (ratio < 1.0), ratio,
                  np.where(short, s.short_life_fraction, 1.0),
                  np.where(short, "unstable", "note"))


def label_outlier(t: pd.DataFrame, s: OrbitSettings) -> pd.DataFrame:
    """The largest robust z-score beyond ``OUTLIER_Z`` in a label of ``MIN_LABEL_SIZE`` or
    more."""
    worst = np.fmax(np.fmax(_f(t, "_z_density"), _f(t, "_z_mass")), _f(t, "_z_radius"))
    rows = (judged(t, "statistics", ("label", "density"), NON_STELLAR_FAMILIES)
            & (worst > OUTLIER_Z) & (_f(t, "_label_size") >= MIN_LABEL_SIZE)
            & np.isfinite(worst))
    return _found(t, "label-outlier", rows, worst, OUTLIER_Z, "suspect")


RuleFunction = Callable[[pd.DataFrame, OrbitSettings], pd.DataFrame]
# Every rule, in the engine's report order; a rule's id is its function's name with dashes.
RULES: dict[str, RuleFunction] = {rule.__name__.replace("_", "-"): rule for rule in (
    missing_value, bad_cell, non_positive, duplicate_id, orphan_parent, parent_cycle, unit_slip,
    bad_eccentricity, ring_edges_reversed,
    denser_than_iron, mass_upper_limit, family_density, oversized_cold_body, over_chandrasekhar,
    over_neutron_star_max, under_hydrogen_burning, degenerate_star, brown_dwarf_range,
    periapsis_inside_parent, inside_rigid_roche, inside_fluid_roche, roche_lobe_overflow,
    outside_hill_sphere, beyond_stable_hill, kepler_mismatch, crossing_orbits, hill_spacing,
    duplicate_orbit, heavier_than_parent, binary_barycentre, tidal_lock_age,
    ring_inside_planet, ring_beyond_roche, ring_beyond_hill, moon_in_ring,
    tidal_heating, short_lived_orbit, label_outlier)}
