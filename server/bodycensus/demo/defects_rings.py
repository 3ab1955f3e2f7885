"""Planted ring and tide defects (one function per rule id), each in a system of its own.

Ring edges are in radii of the ring's planet, as the catalogue writes them. Limits come from
physics (Roche, Hill, the tidal formulas) with the families' parameters, as the rules use them.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from bodycensus.demo.kinds import MAIN_SEQUENCE, MOON_CODE0, QUALITY, RIGIDITY, RING_CODE, codes
from bodycensus.demo.planter import Planter
from bodycensus.demo.population import HOT
from bodycensus.demo.stars import age_seconds
from bodycensus.demo.tides import FORCED_E, decay_end, tidal_life
from bodycensus.science.physics import bodies, orbits, tides

HEATING_FACTOR = 4.0  # planted heated moons: 4x Io's heat flux (physics.tides.IO_HEAT_FLUX)
LIFE_FRACTION = 0.002  # planted short-lived orbits: 0.2 % of the age left (WASP-12b-like)


def _planet_of(p: Planter) -> np.ndarray:
    """Per row, the row of the planet its ring belongs to: the parent of a ring row, else the
    row itself."""
    rows = np.arange(len(p.t["code"]))
    return np.where(p.t["code"] == RING_CODE, np.maximum(p.t["parent"], 0), rows)


def _ring_limits(p: Planter) -> dict[str, np.ndarray]:
    """Per row, in radii of the ring's planet: the fluid Roche limit for the ring's material
    (ice when not given) and the planet's Hill radius."""
    t, planet = p.t, _planet_of(p)
    radius = t["radius"][planet]
    material = np.nan_to_num(t["ring_density"], nan=bodies.WATER_ICE_DENSITY)
    fluid = orbits.roche_fluid(radius, bodies.bulk_density(t["mass"][planet], radius), material)
    star = np.maximum(t["parent"][planet], 0)
    hill = orbits.hill_radius(t["a"][planet], t["e"][planet], t["mass"][planet], t["mass"][star])
    return {"fluid": fluid / radius, "hill": hill / radius}


def _ringed(p: Planter) -> np.ndarray:
    return np.isfinite(p.t["ring_outer"])


def ring_edges_reversed(p: Planter) -> None:
    """A ring whose inner and outer edges were written the wrong way round."""
    rows = p.pick(_ringed(p))
    t = p.t
    t["ring_inner"][rows], t["ring_outer"][rows] = t["ring_outer"][rows], t["ring_inner"][rows]
    p.record("ring-edges-reversed", rows)


def ring_inside_planet(p: Planter) -> None:
    """A ring row whose inner edge is at 0.8 planet radii, inside the planet."""
    rows = p.pick(_ringed(p) & (p.t["code"] == RING_CODE))
    p.t["ring_inner"][rows] = 0.8
    p.record("ring-inside-planet", rows)


def ring_beyond_roche(p: Planter) -> None:
    """A planet's ring reaching 1.5x the fluid Roche limit of its material, where it would have
    gathered into moons (the planet has no moon for the ring to reach)."""
    lim = _ring_limits(p)
    outer = 1.5 * lim["fluid"]
    rows = p.pick(_ringed(p) & (p.t["code"] != RING_CODE) & p.leaves()
                  & (outer < 0.3 * lim["hill"]))
    p.t["ring_outer"][rows] = outer[rows]
    p.record("ring-beyond-roche", rows)


def ring_beyond_hill(p: Planter) -> None:
    """A ring row reaching 1.3x its planet's Hill radius (so past its Roche limit too)."""
    parent = np.maximum(p.t["parent"], 0)
    alone = (p.t["code"] == RING_CODE) & (p.children[parent] == 1)
    rows = p.pick(_ringed(p) & alone)
    p.t["ring_outer"][rows] = 1.3 * _ring_limits(p)["hill"][rows]
    p.record("ring-beyond-hill", rows)


def _planet_rings(p: Planter) -> tuple[np.ndarray, np.ndarray]:
    """Per planet row, its ring's outer edge (planet radii; NaN without a ring), from its own
    columns or its ring row, and how many moons orbit it."""
    t = p.t
    outer = t["ring_outer"].copy()
    ring_rows = np.flatnonzero((t["code"] == RING_CODE) & (t["parent"] >= 0))
    outer[t["parent"][ring_rows]] = t["ring_outer"][ring_rows]
    moon = (t["parent"] >= 0) & (t["code"] != RING_CODE)
    moons = np.bincount(t["parent"][moon], minlength=len(outer))
    return outer, moons


def moon_in_ring(p: Planter) -> None:
    """A planet's only moon moved into the outer part of the planet's ring, on a near-circular
    prograde orbit outside its rigid Roche limit and outside the planet's synchronous orbit (so
    tides move it outward): a moon sweeping a gap, as Pan does in Saturn's A ring."""
    t, parent = p.t, np.maximum(p.t["parent"], 0)
    outer, moons = _planet_rings(p)
    radius = t["radius"][parent]
    a_new = 0.95 * outer[parent] * radius
    rigid = orbits.roche_rigid(radius, bodies.bulk_density(t["mass"][parent], radius),
                               bodies.bulk_density(t["mass"], t["radius"]))
    with np.errstate(invalid="ignore"):
        period = orbits.kepler_period(a_new, t["mass"][parent], t["mass"])
        room = (a_new > 1.2 * np.maximum(rigid, radius)) & (period > t["rotation"][parent])
    alone = (t["code"] >= MOON_CODE0) & (t["code"] != RING_CODE) & (moons[parent] == 1)
    rows = p.pick(alone & room & ~t["retrograde"])
    t["a"][rows], t["e"][rows] = a_new[rows], FORCED_E[0]
    p.refresh_orbit(rows)
    p.record("moon-in-ring", rows)


def _heat_flux_per_e2(t: dict[str, np.ndarray]) -> np.ndarray:
    """Tidal heat flux (W m-2) over e^2 of every row, with its family's k2/Q."""
    code = t["code"]
    k2_over_q = orbits.love_number_k2(t["mass"], t["radius"], RIGIDITY[code]) / QUALITY[code]
    with np.errstate(invalid="ignore", divide="ignore"):
        power = tides.tidal_heating_power(t["a"], 1.0, t["mass"], t["radius"], t["parent_mass"],
                                          k2_over_q)
        return tides.surface_heat_flux(power, t["radius"])


def tidal_heating(p: Planter) -> None:
    """A giant's only moon on an eccentricity (forced, as Io's is) that tides turn into 4x Io's
    heat flux, its orbit still clear of the Roche limit."""
    t, parent = p.t, np.maximum(p.t["parent"], 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        e_new = np.sqrt(HEATING_FACTOR * tides.IO_HEAT_FLUX / _heat_flux_per_e2(t))
        fluid = orbits.roche_fluid(t["radius"][parent],
                                   bodies.bulk_density(t["mass"][parent], t["radius"][parent]),
                                   bodies.bulk_density(t["mass"], t["radius"]))
        clear = orbits.periapsis(t["a"], e_new) > 1.2 * np.maximum(fluid, t["radius"][parent])
    giant = np.isin(t["code"][parent], codes("gas giant", "ice giant"))
    rows = p.pick(p.sole_moons() & giant & clear & (e_new < 0.1))
    t["e"][rows] = e_new[rows]
    p.record("tidal-heating", rows)


def short_lived_orbit(p: Planter) -> None:
    """A hot giant moved in, on a near-circular orbit, until the tide it raises on its star ends
    its orbit within 0.2 % of its age (as WASP-12b's does), still outside its Roche limit and
    inside the star's synchronous orbit; it has no moon or ring to lose."""
    t = p.t
    rows = np.flatnonzero((t["code"] == HOT) & p.leaves() & (t["parent"] >= 0))
    star = np.isin(t["code"][t["parent"][rows]], codes(*MAIN_SEQUENCE))
    rows = rows[star]
    end, life = decay_end(t, rows), tidal_life(t, rows)
    wanted = LIFE_FRACTION * age_seconds(t["age"][rows])
    with np.errstate(invalid="ignore", over="ignore"):
        a_new = (end**6.5 + (t["a"][rows] ** 6.5 - end**6.5) * wanted / life) ** (1 / 6.5)
        period = orbits.kepler_period(a_new, t["mass"][t["parent"][rows]], t["mass"][rows])
        inward = period < 0.9 * t["rotation"][t["parent"][rows]]
    mask = np.zeros(len(t["code"]), dtype=bool)
    mask[rows[np.isfinite(life) & inward & (a_new > 1.05 * end)]] = True
    a_all = np.full(len(mask), np.nan)
    a_all[rows] = a_new
    picked = p.pick(mask)
    t["a"][picked], t["e"][picked] = a_all[picked], FORCED_E[0]
    p.refresh_orbit(picked)
    p.record("short-lived-orbit", picked)


RING_TIDE_PLANTINGS: tuple[Callable[[Planter], None], ...] = (
    ring_beyond_hill, ring_inside_planet, ring_beyond_roche, ring_edges_reversed, moon_in_ring,
    tidal_heating, short_lived_orbit,
)
