"""The derived columns the rules read, computed with pandas over the whole catalogue at once:
each body's physics, its label's robust statistics, its parent, its inner sibling, its rings and
its tides (the pandas reference's second step).

Written the way a notebook would: whole-table columns, ``groupby().transform`` for the label
statistics, ``merge`` for the parent and grandparent, a sort and ``groupby().shift`` for the
inner sibling, and a loop of ``Series.map`` hops (one vectorised lookup per hop) for the loops in
the chains of parents. Formulas come from ``science.physics`` (numpy arrays), thresholds and
families from ``science``; nothing of the engine's polars context is used. An absent value is
NaN; a value that is not positive counts as absent (``non-positive`` reports it once).
"""

from __future__ import annotations

import math

import numpy as np
import numpy.typing as npt
import pandas as pd

from bodycensus.science.families import (
    FAMILY_PARAMETERS,
    FLUID_FAMILIES,
    RING_FAMILIES,
    DensityBand,
    family_mapping,
)
from bodycensus.science.physics import bodies, orbits, tides
from bodycensus.science.rules.bands import DEGENERATE_SPREAD, SLIP_TOLERANCE, UNIT_SLIPS
from bodycensus.science.rules.context import MAD_TO_SIGMA
from bodycensus.science.rules.graph import MAX_DEPTH
from bodycensus.science.rules.ring_context import ASSUMED_RING_DENSITY
from bodycensus.science.rules.tide_context import SYNCHRONOUS_TOLERANCE
from bodycensus.science.units import UNITS, YEAR

Floats = npt.NDArray[np.float64]
_CURVES = {"cold_hhe": bodies.cold_hhe_density, "white_dwarf": bodies.white_dwarf_density,
           "main_sequence": bodies.main_sequence_density,
           "largest_star": bodies.largest_star_density}


def floats(column: pd.Series) -> Floats:
    """A column as a float array (NaN where absent)."""
    return np.asarray(column.to_numpy(dtype=float, na_value=np.nan), dtype=np.float64)


def _positive(column: pd.Series) -> Floats:
    """The column where it is a positive number, else NaN."""
    values = floats(column)
    return np.where(values > 0, values, np.nan)


def flags(column: pd.Series) -> npt.NDArray[np.bool_]:
    """A true/false/absent column as booleans, absent as false."""
    return np.asarray(column.fillna(False).to_numpy(dtype=bool), dtype=np.bool_)


def band_edge(band: DensityBand, side: str, mass: Floats) -> Floats:
    """A family's low or high plausible density at each mass ("const": the factor itself)."""
    curve, factor = ((band.low_curve, band.low_factor) if side == "low"
                     else (band.high_curve, band.high_factor))
    if curve == "const":
        return np.full(mass.shape, factor)
    if curve in bodies.SEAGER_FITS:
        return factor * bodies.composition_density(mass, curve)
    return factor * _CURVES[curve](mass)


def _bands(t: pd.DataFrame) -> None:
    """``_band_low``, ``_band_high``: each family's density band at the body's mass (NaN for
    families without one, and where a curve is past its validity)."""
    mass = floats(t["_mass"])
    for side in ("low", "high"):
        edge = np.full(len(t), np.nan)
        for family, params in FAMILY_PARAMETERS.items():
            if params.density_band is not None:
                rows = (t["family"] == family).to_numpy()
                edge[rows] = band_edge(params.density_band, side, mass[rows])
        t[f"_band_{side}"] = np.where(np.isfinite(edge), edge, np.nan)


def _degenerate(t: pd.DataFrame) -> npt.NDArray[np.bool_]:
    """A ``star`` whose density is a white dwarf's at its mass (within ``DEGENERATE_SPREAD``)
    or a neutron star's."""
    density, mass = floats(t["density"]), floats(t["_mass"])
    curve = bodies.white_dwarf_density(mass)
    white = (density >= curve / DEGENERATE_SPREAD) & (density <= curve * DEGENERATE_SPREAD)
    neutron = FAMILY_PARAMETERS["neutron_star"].density_band
    assert neutron is not None
    compact = ((density >= band_edge(neutron, "low", mass))
               & (density <= band_edge(neutron, "high", mass)))
    return np.asarray((t["family"] == "star").to_numpy() & (white | compact), dtype=np.bool_)


def _unit_slips(t: pd.DataFrame) -> None:
    """``_slip``: the density misses its band by more than ``SLIP_TOLERANCE`` and one known unit
    factor brings it inside; ``_trusted_density`` is the density where it does not."""
    density, low, high = floats(t["density"]), floats(t["_band_low"]), floats(t["_band_high"])
    t["_degenerate"] = _degenerate(t)
    far_out = ((density < low / SLIP_TOLERANCE) | (density > high * SLIP_TOLERANCE)) \
        & ~t["_degenerate"].to_numpy()
    slip = np.zeros(len(t), dtype=bool)
    for field, given, read_as in UNIT_SLIPS:
        factor = UNITS[read_as].to_si / UNITS[given].to_si
        fixed = density / (factor if field == "mass" else factor**-3)
        slip |= far_out & (fixed >= low) & (fixed <= high)
    t["_slip"] = slip
    t["_trusted_density"] = np.where(slip, np.nan, density)


def _relative_error(t: pd.DataFrame, field: str, side: str) -> Floats:
    """The relative uncertainty of ``field`` on one side (the - side falls back on the symmetric
    or + one, and the other way round); NaN where none is given."""
    low, high = np.abs(floats(t[f"{field}_error_low"])), np.abs(floats(t[f"{field}_error"]))
    first, second = (low, high) if side == "low" else (high, low)
    error = np.where(np.isnan(first), second, first)
    value = floats(t[field])
    return np.where(value > 0, error / value, np.nan)


def _body_columns(t: pd.DataFrame) -> None:
    """Per-body physics that needs no other row: positive mass, radius and axis, a valid
    eccentricity, the uncertainties, density, periapsis and apoapsis, the orbit's sense."""
    raw_mass, error = floats(t["mass"]), np.abs(floats(t["mass_error"]))
    lower = np.abs(floats(t["mass_error_low"]))
    lower = np.where(np.isnan(lower), error, lower)
    t["_mass_upper_limit"] = (((raw_mass > 0) & (lower >= raw_mass))
                              | ((raw_mass == 0) & (error > 0)))
    mass_low, radius_high = _relative_error(t, "mass", "low"), _relative_error(t, "radius", "high")
    given = ~np.isnan(mass_low) | ~np.isnan(radius_high)
    spread = np.sqrt(np.nan_to_num(mass_low) ** 2 + (3.0 * np.nan_to_num(radius_high)) ** 2)
    t["_density_error"] = np.where(given, spread, np.nan)
    t["_mass_error"] = _relative_error(t, "mass", "high")
    a_error = _relative_error(t, "semi_major_axis", "high")
    t["_a_error"] = np.where(np.isnan(a_error), floats(t["_a_printed"]), a_error)
    t["_period_error"] = _relative_error(t, "period", "high")
    t["_mass"], t["_radius"] = _positive(t["mass"]), _positive(t["radius"])
    e = floats(t["eccentricity"])
    t["_e"] = np.where(np.isnan(e), 0.0, np.where((e >= 0) & (e < 1), e, np.nan))
    t["_a"] = _positive(t["semi_major_axis"])
    t["density"] = np.where(t["_mass_upper_limit"], np.nan,
                            bodies.bulk_density(floats(t["_mass"]), floats(t["_radius"])))
    t["periapsis"] = orbits.periapsis(floats(t["_a"]), floats(t["_e"]))
    t["apoapsis"] = orbits.apoapsis(floats(t["_a"]), floats(t["_e"]))
    inclined = floats(t["inclination"]) > math.pi / 2.0
    t["_retrograde"] = np.where(t["retrograde"].isna(), inclined, flags(t["retrograde"]))
    t["_is_ring"] = t["family"].isin(RING_FAMILIES)
    in_metres = {"ring_inner": "_ring_inner_m", "ring_outer": "_ring_outer_m"}
    for field, name in in_metres.items():  # the ring a planet's row carries, in metres
        t[name] = np.where(t["_is_ring"], np.nan, _positive(t[field]) * floats(t["_radius"]))


def _label_statistics(t: pd.DataFrame) -> None:
    """Robust z-scores within each label (median and MAD of the label's rows, a null label its
    own group): the density (against the band's high edge at its mass where the family has a
    band), and mass and radius where it has none."""
    banded = t["_band_low"].notna().to_numpy()
    density = floats(t["density"])
    values = {
        "_z_density": np.where(banded, np.log10(density / floats(t["_band_high"])),
                               np.log10(density)),
        "_z_mass": np.log10(floats(t["_mass"])),
        "_z_radius": np.log10(floats(t["_radius"])),
    }
    groups = t["label"]
    t["_label_size"] = t.groupby(groups, dropna=False)["_row"].transform("size")
    for score, value in values.items():
        x = pd.Series(value, index=t.index)
        median = x.groupby(groups, dropna=False).transform("median")
        mad = (x - median).abs().groupby(groups, dropna=False).transform("median")
        z = np.abs(MAD_TO_SIGMA * (value - floats(median)) / floats(mad))
        t[score] = z if score == "_z_density" else np.where(banded, np.nan, z)


def _cycles(t: pd.DataFrame) -> None:
    """``_in_cycle``: the chain of parents from this id never reaches a root within
    ``MAX_DEPTH`` hops (the first row of an id with a parent says its parent)."""
    edges = t[t["id"].notna() & t["parent"].notna()].drop_duplicates("id", keep="first")
    parent_of = pd.Series(edges["parent"].to_numpy(), index=edges["id"].to_numpy())
    walking = pd.Series(edges["parent"].to_numpy(), index=edges["id"].to_numpy())
    for _ in range(MAX_DEPTH):
        walking = walking.map(parent_of).dropna()
        if walking.empty:
            break
    t["_in_cycle"] = t["id"].isin(walking.index)


_PARENT_COLUMNS = {
    "id": "parent", "_mass": "parent_mass", "radius": "parent_radius",
    "_trusted_density": "parent_density", "family": "parent_family",
    "semi_major_axis": "parent_semi_major_axis", "_e": "parent_eccentricity",
    "parent": "grandparent", "rotation_period": "parent_rotation_period", "age": "parent_age",
    "_ring_inner_m": "parent_ring_inner", "_ring_outer_m": "parent_ring_outer",
    "_mass_error": "parent_mass_error",
}


def _with_parent(t: pd.DataFrame) -> pd.DataFrame:
    """Each body's parent (the first row of that id) and its grandparent's mass, merged on."""
    parents = (t[t["id"].notna()].drop_duplicates("id", keep="first")[list(_PARENT_COLUMNS)]
               .rename(columns=_PARENT_COLUMNS))
    parents["parent_radius"] = _positive(parents["parent_radius"])
    parents["parent_semi_major_axis"] = _positive(parents["parent_semi_major_axis"])
    parents["_parent_exists"] = True  # absent after the merge where no row has that id
    grandparents = parents[["parent", "parent_mass"]].rename(
        columns={"parent": "grandparent", "parent_mass": "grandparent_mass"})
    merged = t.merge(parents, on="parent", how="left").merge(grandparents, on="grandparent",
                                                             how="left")
    merged["_parent_exists"] = merged["_parent_exists"].notna()
    merged.index = t.index
    return merged


def _derived_orbits(t: pd.DataFrame) -> None:
    """A body with a period and a parent of known mass but no semi-major axis gets one from
    Kepler's third law; ``orbit_derived`` names what was derived."""
    period, parent_mass, a = _positive(t["period"]), floats(t["parent_mass"]), floats(t["_a"])
    derived = orbits.kepler_semi_major_axis(period, parent_mass, np.nan_to_num(floats(t["_mass"])))
    derive = np.isnan(a) & ~np.isnan(derived) & t["_parent_exists"].to_numpy()
    t["_a"] = np.where(derive, derived, a)
    t["periapsis"] = np.where(derive, orbits.periapsis(floats(t["_a"]), floats(t["_e"])),
                              floats(t["periapsis"]))
    t["apoapsis"] = np.where(derive, orbits.apoapsis(floats(t["_a"]), floats(t["_e"])),
                             floats(t["apoapsis"]))
    what = pd.Series(None, index=t.index, dtype=object)
    what[np.isnan(period) & ~np.isnan(a) & ~np.isnan(parent_mass)] = "period"
    what[derive] = "semi_major_axis"
    t["orbit_derived"] = what


def _family_tides(family: pd.Series) -> tuple[Floats, Floats]:
    """Rigidity (Pa) and tidal Q of each family."""
    rigidity = family.map({f: p.rigidity for f, p in FAMILY_PARAMETERS.items()}).fillna(3e10)
    quality = family.map({f: p.quality_factor for f, p in FAMILY_PARAMETERS.items()}).fillna(
        100.0)
    return floats(rigidity), floats(quality)


def _orbit_columns(t: pd.DataFrame) -> None:
    """Roche limits, Hill spheres, the Kepler period, the barycentre and the despinning time."""
    a, e, mass, radius = floats(t["_a"]), floats(t["_e"]), floats(t["_mass"]), floats(t["_radius"])
    density, parent_density = floats(t["_trusted_density"]), floats(t["parent_density"])
    parent_mass, parent_radius = floats(t["parent_mass"]), floats(t["parent_radius"])
    parent_e = floats(t["parent_eccentricity"])
    t["roche_rigid"] = orbits.roche_rigid(parent_radius, parent_density, density)
    t["roche_fluid"] = orbits.roche_fluid(parent_radius, parent_density, density)
    t["hill_radius"] = orbits.hill_radius(a, e, mass, parent_mass)
    parent_hill = orbits.hill_radius(floats(t["parent_semi_major_axis"]), parent_e, parent_mass,
                                     floats(t["grandparent_mass"]))
    t["parent_hill_radius"] = parent_hill
    stable = np.where(t["_retrograde"], orbits.stable_hill_fraction(parent_e, e, retrograde=True),
                      orbits.stable_hill_fraction(parent_e, e))
    t["stable_hill_limit"] = stable * parent_hill
    kepler = orbits.kepler_period(a, parent_mass, np.nan_to_num(mass))
    t["kepler_period"] = kepler
    t["period_ratio"] = np.where(t["orbit_derived"] != "semi_major_axis",
                                 _positive(t["period"]) / kepler, np.nan)
    t["barycentre_offset"] = orbits.barycentre_offset(a, parent_mass, mass)
    rigidity, quality = _family_tides(t["family"])
    t["tidal_lock_time"] = orbits.tidal_lock_time(a, mass, radius, parent_mass, rigidity,
                                                  quality) / YEAR


def _tide_columns(t: pd.DataFrame) -> None:
    """Tidal heating of eccentric orbits, and the years a decaying orbit has left against its
    system's age."""
    a, e, mass, radius = floats(t["_a"]), floats(t["_e"]), floats(t["_mass"]), floats(t["_radius"])
    parent_mass, parent_radius = floats(t["parent_mass"]), floats(t["parent_radius"])
    rigidity, quality = _family_tides(t["family"])
    k2_over_q = orbits.love_number_k2(mass, radius, rigidity) / quality
    power = tides.tidal_heating_power(a, e, mass, radius, parent_mass, k2_over_q)
    t["tidal_heating"] = np.where(e > 0, power, np.nan)
    t["tidal_heat_flux"] = tides.surface_heat_flux(floats(t["tidal_heating"]), radius)
    parent_rigidity, parent_quality = _family_tides(t["parent_family"])
    q_prime = tides.modified_quality_factor(
        orbits.love_number_k2(parent_mass, parent_radius, parent_rigidity), parent_quality)
    fluid = t["family"].isin(FLUID_FAMILIES).to_numpy()
    roche = np.where(fluid, floats(t["roche_fluid"]), floats(t["roche_rigid"]))
    end = np.fmax(parent_radius + np.nan_to_num(radius), roche)
    years = tides.tidal_decay_time(a, end, parent_mass, parent_radius, mass, q_prime) / YEAR
    spin = _positive(t["parent_rotation_period"])
    inside = floats(t["kepler_period"]) < (1.0 - SYNCHRONOUS_TOLERANCE) * spin
    decays = t["_retrograde"].to_numpy() | np.isnan(spin) | inside
    t["tidal_decay_time"] = np.where(decays & (a > end), years, np.nan)
    age, parent_age = _positive(t["age"]), _positive(t["parent_age"])
    t["life_to_age"] = floats(t["tidal_decay_time"]) / np.where(np.isnan(age), parent_age, age)


def _edge(t: pd.DataFrame, field: str, planet_radius: Floats) -> Floats:
    """A ring row's edge in metres (given in radii of its planet)."""
    return _positive(t[field]) * planet_radius


def _ring_columns(t: pd.DataFrame) -> None:
    """Per row that is or carries a ring: its edges, its planet's radius and Hill radius, and the
    fluid Roche limit for its material (solid ice where not given)."""
    ring = t["_is_ring"].to_numpy()
    has_ring = ring | t["ring_inner"].notna().to_numpy() | t["ring_outer"].notna().to_numpy()
    t["_has_ring"] = has_ring

    def of_planet(on_ring: str, on_planet: str) -> Floats:
        return np.where(has_ring, np.where(ring, floats(t[on_ring]), floats(t[on_planet])), np.nan)

    t["ring_planet_radius"] = of_planet("parent_radius", "_radius")
    planet_density = of_planet("parent_density", "_trusted_density")
    t["_ring_planet_hill"] = of_planet("parent_hill_radius", "hill_radius")
    parent_radius = floats(t["parent_radius"])
    t["ring_inner_edge"] = np.where(ring, _edge(t, "ring_inner", parent_radius),
                                    floats(t["_ring_inner_m"]))
    t["ring_outer_edge"] = np.where(ring, _edge(t, "ring_outer", parent_radius),
                                    floats(t["_ring_outer_m"]))
    given = floats(t["ring_density"])
    material = np.where(given > 0, given, ASSUMED_RING_DENSITY)
    t["ring_roche_fluid"] = np.where(has_ring, orbits.roche_fluid(
        floats(t["ring_planet_radius"]), planet_density, material), np.nan)


def _rings_around(t: pd.DataFrame) -> pd.DataFrame:
    """For each orbiting body, the ring whose span holds its semi-major axis: a ring row of the
    same parent (the narrowest by outer edge), else the parent's own ring columns."""
    ring = t["_is_ring"]
    rings = t[ring & t["parent"].notna() & t["ring_outer_edge"].notna()]
    rings = pd.DataFrame({
        "parent": rings["parent"], "ring_around": rings["id"],
        "_ring_around_inner": rings["ring_inner_edge"].fillna(rings["ring_planet_radius"]),
        "_ring_around_outer": rings["ring_outer_edge"]})
    moons = t.loc[~ring & t["_a"].notna() & t["parent"].notna(), ["_row", "parent", "_a"]]
    pairs = moons.merge(rings, on="parent", how="inner")
    pairs = pairs[(pairs["_a"] >= pairs["_ring_around_inner"])
                  & (pairs["_a"] <= pairs["_ring_around_outer"])]
    nearest = (pairs.sort_values("_ring_around_outer", kind="stable")
               .drop_duplicates("_row", keep="first").drop(columns=["parent", "_a"]))
    joined = t.merge(nearest, on="_row", how="left")
    joined.index = t.index
    low = floats(t["parent_ring_inner"].fillna(t["parent_radius"]))
    high, a = floats(t["parent_ring_outer"]), floats(t["_a"])
    within = ~ring.to_numpy() & (a >= low) & (a <= high)
    use_parent = joined["ring_around"].isna().to_numpy() & within
    joined["ring_around"] = joined["ring_around"].where(~use_parent, joined["parent"])
    joined["_ring_around_inner"] = np.where(use_parent, low, floats(joined["_ring_around_inner"]))
    joined["_ring_around_outer"] = np.where(use_parent, high, floats(joined["_ring_around_outer"]))
    return joined


_INNER = {"id": "inner_id", "_a": "inner_a", "_mass": "inner_mass", "apoapsis": "inner_apoapsis",
          "period": "inner_period"}


def _siblings(t: pd.DataFrame) -> None:
    """The next body inward around the same parent (siblings ordered by semi-major axis, ties
    and absent axes by row); none without a parent."""
    ordered = t[["parent", "_row", *_INNER]].sort_values(["parent", "_a", "_row"],
                                                          na_position="first", kind="stable")
    inner = ordered.groupby("parent", dropna=True)[list(_INNER)].shift(1)
    for source, name in _INNER.items():
        t[name] = inner[source].reindex(t.index)


def derive(table: pd.DataFrame) -> pd.DataFrame:
    """The catalogue ``table`` (``pandas_catalogue.read_catalogue``) with every column the rules
    read."""
    t = table.copy()
    labels = sorted(t["label"].dropna().unique())
    t["family"] = t["label"].map(family_mapping(labels)).fillna("unknown")
    counts = t["id"].value_counts()
    t["_id_count"] = t["id"].map(counts).fillna(0).astype(np.int64)
    _cycles(t)
    with np.errstate(all="ignore"):
        _body_columns(t)
        _bands(t)
        _unit_slips(t)
        _label_statistics(t)
        t = _with_parent(t)
        _derived_orbits(t)
        _orbit_columns(t)
        _tide_columns(t)
        _ring_columns(t)
        t = _rings_around(t)
        _siblings(t)
    return t
