"""The demo's planted defects and artefacts are real: each breaks its rule, measured with
physics/ directly (sources beside each check, ../shared/REFERENCES.md)."""

from __future__ import annotations

import math

import numpy as np
import polars as pl
from demo_support import Demo, demo, family_band

from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.physics import bodies, orbits, tides
from bodycensus.science.units import HOUR, M_EARTH, M_JUPITER, M_SUN

__all__ = ["demo"]  # the session fixture


# --- planted bodies break their rule, measured with physics directly --------------------------
def _limits(demo: Demo, rows: np.ndarray) -> dict[str, np.ndarray]:
    s, par = demo.si, demo.parent[rows]
    return {
        "peri": orbits.periapsis(s["a"][rows], s["e"][rows]), "R": s["radius"][par],
        "rigid": orbits.roche_rigid(s["radius"][par], s["density"][par], s["density"][rows]),
        "fluid": orbits.roche_fluid(s["radius"][par], s["density"][par], s["density"][rows]),
        "hill": orbits.hill_radius(s["a"][par], s["e"][par], s["mass"][par],
                                   s["mass"][demo.parent[par]]),
        "stable": orbits.stable_hill_fraction(s["e"][par], s["e"][rows]),
    }


def test_planted_orbits_break_their_limits(demo: Demo) -> None:
    s = demo.si
    lim = {rule: _limits(demo, demo.planted(rule)) for rule in (
        "periapsis-inside-parent", "inside-rigid-roche", "inside-fluid-roche",
        "outside-hill-sphere", "beyond-stable-hill")}
    assert np.all(lim["periapsis-inside-parent"]["peri"] < lim["periapsis-inside-parent"]["R"])
    rigid = lim["inside-rigid-roche"]  # Shu 1982: d = R_M (2 rho_M / rho_m)^(1/3)
    assert np.all((rigid["R"] < rigid["peri"]) & (rigid["peri"] < rigid["rigid"]))
    fluid = lim["inside-fluid-roche"]  # Roche 1849: 2.44 R_M (rho_M / rho_m)^(1/3)
    assert np.all((fluid["rigid"] < fluid["peri"]) & (fluid["peri"] < fluid["fluid"]))
    out = demo.planted("outside-hill-sphere")
    assert np.all(s["a"][out] > lim["outside-hill-sphere"]["hill"])
    beyond, b = demo.planted("beyond-stable-hill"), lim["beyond-stable-hill"]
    assert np.all((b["stable"] * b["hill"] < s["a"][beyond]) & (s["a"][beyond] < b["hill"]))
    kepler = demo.planted("kepler-mismatch")
    ratio = s["period"][kepler] / orbits.kepler_period(
        s["a"][kepler], s["mass"][demo.parent[kepler]], s["mass"][kepler])
    assert np.all(np.abs(ratio - 1) > 0.05)


def test_planted_siblings_cross_or_crowd(demo: Demo) -> None:
    s = demo.si
    outer, inner = demo.planted("crossing-orbits"), demo.planted("crossing-orbits", "other")
    assert np.all(orbits.apoapsis(s["a"][inner], s["e"][inner])
                  > orbits.periapsis(s["a"][outer], s["e"][outer]))
    outer, inner = demo.planted("hill-spacing"), demo.planted("hill-spacing", "other")
    mutual = orbits.mutual_hill_radius(s["a"][inner], s["mass"][inner], s["mass"][outer],
                                       s["mass"][demo.parent[inner]])
    assert np.all((s["a"][outer] - s["a"][inner]) / mutual < 2 * math.sqrt(3))  # Gladman 1993
    assert np.all(orbits.apoapsis(s["a"][inner], s["e"][inner])
                  < orbits.periapsis(s["a"][outer], s["e"][outer]))


def test_planted_pairs_and_locks(demo: Demo) -> None:
    s = demo.si
    heavy = demo.planted("heavier-than-parent")
    assert np.all(s["mass"][heavy] > s["mass"][demo.parent[heavy]])
    bary = demo.planted("binary-barycentre")
    offset = orbits.barycentre_offset(s["a"][bary], s["mass"][demo.parent[bary]], s["mass"][bary])
    assert np.all(offset > s["radius"][demo.parent[bary]])
    lobe = demo.planted("roche-lobe-overflow")  # Eggleton 1983 volume-equivalent lobe radius
    r_lobe = orbits.roche_lobe_radius(orbits.periapsis(s["a"][lobe], s["e"][lobe]),
                                      s["mass"][lobe] / s["mass"][demo.parent[lobe]])
    assert np.all(s["radius"][lobe] > r_lobe)
    lock = demo.planted("tidal-lock-age")  # softest parameters: ice rigidity, Q = 100
    t_lock = orbits.tidal_lock_time(s["a"][lock], s["mass"][lock], s["radius"][lock],
                                    s["mass"][demo.parent[lock]], 4e9, 100.0)
    assert np.all(s["locked"][lock] & (t_lock > 10 * s["age"][lock]))


def test_planted_bodies_break_their_limits(demo: Demo) -> None:
    s = demo.si

    def mass(rule: str) -> np.ndarray:
        return s["mass"][demo.planted(rule)]

    assert np.all(mass("over-chandrasekhar") > 1.44 * M_SUN)
    assert np.all(mass("over-neutron-star-max") > 3.0 * M_SUN)
    assert np.all(mass("under-hydrogen-burning") < 0.075 * M_SUN)
    assert np.all(mass("brown-dwarf-range") < 13 * M_JUPITER)
    iron = demo.planted("denser-than-iron")  # Seager et al. 2007 Fe(eps) curve
    assert np.all(s["density"][iron] > 1.05 * bodies.composition_density(s["mass"][iron], "iron"))
    dense = demo.planted("family-density")
    _, high = family_band("gas_giant", s["mass"][dense])
    assert np.all(s["density"][dense] > high)
    big = demo.planted("oversized-cold-body")
    assert np.all(s["radius"][big] > 2 * bodies.cold_hhe_radius(s["mass"][big]))
    slip = demo.planted("unit-slip")
    ratio = s["radius"][slip] / bodies.composition_radius(s["mass"][slip], "rock")
    assert np.all((ratio > 300) & (ratio < 3000))  # metres in the km column


def test_planted_data_errors(demo: Demo) -> None:
    s, cat = demo.si, demo.catalogue
    assert np.all(np.isnan(s["a"][demo.planted("missing-value")]))
    assert np.all(s["rotation"][demo.planted("non-positive")] < 0)
    assert np.all(s["e"][demo.planted("bad-eccentricity")] < 0)
    ids = cat["id"].value_counts().filter(pl.col("count") > 1)["id"]
    assert sorted(ids) == sorted(demo.planted_ids("duplicate-id"))
    orphans = cat.filter(pl.col("orbits").is_not_null() & ~pl.col("orbits").is_in(cat["id"]))
    assert sorted(orphans["id"]) == sorted(demo.planted_ids("orphan-parent"))
    cycle = demo.planted("parent-cycle")
    assert np.all(demo.parent[demo.parent[cycle]] == cycle)


def _ring_planet(demo: Demo, rows: np.ndarray) -> np.ndarray:
    """The planet row of each ring in ``rows``: a ring row's parent, else the row itself."""
    return np.where(demo.si["family"][rows] == "ring", demo.parent[rows], rows)


def test_planted_rings_break_their_limits(demo: Demo) -> None:
    s = demo.si
    reversed_ = demo.planted("ring-edges-reversed")
    assert np.all(s["ring_outer"][reversed_] < s["ring_inner"][reversed_])
    assert np.all(s["ring_inner"][demo.planted("ring-inside-planet")] < 1.0)  # planet radii
    wide = demo.planted("ring-beyond-roche")
    planet = _ring_planet(demo, wide)
    # Fluid Roche limit for the material (ice, 917 kg/m3, when not given), Roche 1849; the rule
    # allows 1.2x for porous particles.
    fluid = orbits.roche_fluid(s["radius"][planet], s["density"][planet],
                               np.nan_to_num(s["ring_density"][wide], nan=917.0))
    assert np.all(s["ring_outer"][wide] * s["radius"][planet] > 1.2 * fluid)
    loose = demo.planted("ring-beyond-hill")
    planet = _ring_planet(demo, loose)
    star = demo.parent[planet]  # Hill 1878: a(1-e)(m/3M)^(1/3)
    hill = orbits.hill_radius(s["a"][planet], s["e"][planet], s["mass"][planet], s["mass"][star])
    assert np.all(s["ring_outer"][loose] * s["radius"][planet] > hill)


def test_planted_moons_orbit_within_a_ring(demo: Demo) -> None:
    s, cat = demo.si, demo.catalogue
    for moon in demo.planted("moon-in-ring"):
        planet = demo.parent[moon]
        ring_rows = np.flatnonzero((demo.parent == planet) & (s["family"] == "ring"))
        ring = ring_rows[0] if len(ring_rows) else planet
        span = np.array([s["ring_inner"][ring], s["ring_outer"][ring]]) * s["radius"][planet]
        assert span[0] < s["a"][moon] < span[1], cat["id"][int(moon)]


def test_planted_tidal_states(demo: Demo) -> None:
    s = demo.si
    hot = demo.planted("tidal-heating")  # Peale, Cassen & Reynolds 1979, family k2/Q
    fam = s["family"][hot]
    k2 = orbits.love_number_k2(s["mass"][hot], s["radius"][hot],
                               np.array([FAMILY_PARAMETERS[f].rigidity for f in fam]))
    q = np.array([FAMILY_PARAMETERS[f].quality_factor for f in fam])
    power = tides.tidal_heating_power(s["a"][hot], s["e"][hot], s["mass"][hot], s["radius"][hot],
                                      s["mass"][demo.parent[hot]], k2 / q)
    assert np.all(tides.surface_heat_flux(power, s["radius"][hot]) > tides.IO_HEAT_FLUX)
    doomed = demo.planted("short-lived-orbit")  # constant-Q decay, the star's family Q'
    star = demo.parent[doomed]
    q_star = FAMILY_PARAMETERS["star"].quality_factor
    q_prime = tides.modified_quality_factor(orbits.love_number_k2(
        s["mass"][star], s["radius"][star], FAMILY_PARAMETERS["star"].rigidity), q_star)
    fluid = orbits.roche_fluid(s["radius"][star], s["density"][star], s["density"][doomed])
    end = np.maximum(s["radius"][star] + s["radius"][doomed], fluid)
    life = tides.tidal_decay_time(s["a"][doomed], end, s["mass"][star], s["radius"][star],
                                  s["mass"][doomed], q_prime)
    assert np.all(life < 0.01 * s["age"][doomed]) and np.all(life > 0)
    period = orbits.kepler_period(s["a"][doomed], s["mass"][star], s["mass"][doomed])
    assert np.all(period < s["rotation"][star])  # inside the star's synchronous orbit


# --- the three generator artefacts -------------------------------------------------------------
def _artefact(demo: Demo, kind: str) -> dict[str, object]:
    return demo.truth.filter(pl.col("rule") == kind).row(0, named=True)


def test_artefacts_are_where_the_truth_says(demo: Demo) -> None:
    s, labels = demo.si, demo.catalogue["type"].to_numpy()
    cutoff = _artefact(demo, "cutoff")
    radius = s["radius"][labels == cutoff["label"]]
    assert radius.min() >= cutoff["at"] and np.mean(radius < 1.2 * cutoff["at"]) > 0.01
    gap = _artefact(demo, "gap")
    spin = s["rotation"][labels == gap["label"]]
    assert not np.any((spin >= gap["low"]) & (spin <= gap["high"]))
    assert np.sum(spin < gap["low"]) > 100 and np.sum(spin > gap["high"]) > 100
    spike = _artefact(demo, "spike")
    mass = s["mass"][labels == spike["label"]]
    held = np.isclose(mass, spike["at"], rtol=1e-9)
    assert 0.025 < held.mean() < 0.06
    assert np.unique(mass[~held], return_counts=True)[1].max() <= 3


def test_gap_holds_even_for_an_ice_giant_locked_into_thefamily_band() -> None:
    from bodycensus.demo.kinds import CODE
    from bodycensus.demo.population import GAP_SPIN, _spin

    parent_mass = np.array([0.3 * M_SUN])
    mass, radius = np.array([15 * M_EARTH]), np.array([2.5e7])
    a = (6.674e-11 * parent_mass * (16 * HOUR / (2 * math.pi)) ** 2) ** (1 / 3)  # P = 16 h
    table = {"code": np.array([CODE["ice giant"]]), "a": a, "mass": mass, "radius": radius,
             "parent_mass": parent_mass, "age": np.array([5e9]),
             "period": orbits.kepler_period(a, parent_mass, mass)}
    spin, locked = _spin(np.random.default_rng(1), table)
    assert not (GAP_SPIN[0] <= spin[0] <= GAP_SPIN[1]) and not locked[0]
