"""Tides in the demo population: a generator that respects them damps the eccentricities tides
damp, and keeps no moon that tides would already have brought down.

Both use the physics and family parameters the rules use (physics.tides, families), so a clean
demo body shows neither strong tidal heating nor a short-lived orbit unless it is planted.
"""

from __future__ import annotations

import numpy as np

from bodycensus.demo.kinds import (
    FAMILY_OF,
    MOON_CODE0,
    PLANET_CODE0,
    QUALITY,
    RIGIDITY,
    RING_CODE,
    lognormal,
)
from bodycensus.demo.stars import age_seconds
from bodycensus.science.families import FLUID_FAMILIES
from bodycensus.science.physics import bodies, orbits, tides

Table = dict[str, np.ndarray]
FORCED_E = (3e-5, 0.8)  # median, sigma: a round figure well below the free eccentricities
SURVIVAL_AGES = 3.0  # a clean moon keeps at least this many ages of tidal life (margin for scatter)
_FLUID = np.array([family in FLUID_FAMILIES for family in FAMILY_OF])


def _orbiting(t: Table) -> np.ndarray:
    """Planets and moons (not stars, not rings) with an orbit."""
    code = t["code"]
    return (code >= PLANET_CODE0) & (code != RING_CODE) & np.isfinite(t["a"])


def damp_eccentricities(rng: np.random.Generator, t: Table) -> None:
    """Each orbiting body's eccentricity times exp(-age / tau_e), as the tide it carries damps it
    (physics.tides.circularisation_time, its family's k2/Q), plus a small forced eccentricity
    that its neighbours keep up (log-normal, FORCED_E), so no orbit is exactly circular."""
    rows = np.flatnonzero(_orbiting(t))
    code = t["code"][rows]
    mass, radius = t["mass"][rows], t["radius"][rows]
    k2_over_q = orbits.love_number_k2(mass, radius, RIGIDITY[code]) / QUALITY[code]
    tau = tides.circularisation_time(t["a"][rows], mass, radius, t["parent_mass"][rows],
                                     k2_over_q)
    forced = lognormal(rng, FORCED_E[0], FORCED_E[1], len(rows))
    t["e"][rows] = t["e"][rows] * np.exp(-age_seconds(t["age"][rows]) / tau) + forced


def decay_end(t: Table, rows: np.ndarray) -> np.ndarray:
    """Where a decaying orbit of ``rows`` ends: the parent's surface, or the body's Roche limit
    (fluid for fluid families, rigid otherwise) where that is farther out, as the rule takes it."""
    par = t["parent"][rows]
    p_radius = t["radius"][par]
    density = bodies.bulk_density(t["mass"][rows], t["radius"][rows])
    p_density = bodies.bulk_density(t["mass"][par], p_radius)
    roche = np.where(_FLUID[t["code"][rows]], orbits.roche_fluid(p_radius, p_density, density),
                     orbits.roche_rigid(p_radius, p_density, density))
    return np.maximum(p_radius + t["radius"][rows], roche)


def tidal_life(t: Table, rows: np.ndarray) -> np.ndarray:
    """Seconds until the tide on the parent brings each orbit in ``rows`` to its end (inf where
    it moves the orbit outward), as the short-lived-orbit rule sees it: the parent's Q' from its
    family, the orbit decaying inside the parent's synchronous orbit or when retrograde."""
    par = t["parent"][rows]
    pcode = t["code"][par]
    p_mass, p_radius = t["mass"][par], t["radius"][par]
    q_prime = tides.modified_quality_factor(
        orbits.love_number_k2(p_mass, p_radius, RIGIDITY[pcode]), QUALITY[pcode])
    life = tides.tidal_decay_time(t["a"][rows], decay_end(t, rows), p_mass, p_radius,
                                  t["mass"][rows], q_prime)
    period = orbits.kepler_period(t["a"][rows], p_mass, t["mass"][rows])
    with np.errstate(invalid="ignore"):
        outward = ~t["retrograde"][rows] & (period >= 0.99 * t["rotation"][par])
    return np.where(outward, np.inf, life)


def doomed_moons(t: Table) -> np.ndarray:
    """Moons whose tidal life is shorter than SURVIVAL_AGES times their age: tides would have
    brought them down already, so a tide-aware generator holds none."""
    moon = (t["code"] >= MOON_CODE0) & (t["code"] != RING_CODE) & np.isfinite(t["a"])
    rows = np.flatnonzero(moon)
    doomed = np.zeros(len(moon), dtype=bool)
    doomed[rows] = tidal_life(t, rows) < SURVIVAL_AGES * age_seconds(t["age"][rows])
    return doomed
