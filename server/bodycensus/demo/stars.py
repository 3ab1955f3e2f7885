"""Stars, brown dwarfs and remnants of the demo catalogue: systems, primaries and companions.

Sizes and luminosities come from the curves in physics.bodies; the surface temperature of a
main-sequence star follows from its luminosity and radius (Stefan-Boltzmann law).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from bodycensus.demo.kinds import (
    COMPANION_SHARES,
    MAIN_SEQUENCE,
    PRIMARY_SHARES,
    STAR_KINDS,
    codes,
    lognormal,
)
from bodycensus.science.physics import bodies
from bodycensus.science.units import L_SUN, M_JUPITER, M_SUN, R_SUN, YEAR

T_SUN = 5772.0  # K; IAU 2015 Resolution B3 nominal solar effective temperature
COMPANION_SHARE = 0.12  # systems with a second star
SYSTEM_AGE = (4.5e9, 0.35)  # years: median, sigma
# Physical ranges the draws must respect (the brief's limits); laws sit >= 4 sigma inside them.
MASS_RANGES: dict[str, tuple[float, float]] = {
    "brown dwarf": (15.0 * M_JUPITER, 70.0 * M_JUPITER),
    "white dwarf": (0.5 * M_SUN, 1.2 * M_SUN),
    "neutron star": (1.2 * M_SUN, 2.0 * M_SUN),
}
NS_RADIUS = (11.5e3, 0.03, 10e3, 13e3)  # m: median, sigma, lowest, highest


def redraw(rng: np.random.Generator, draw: Callable[[int], np.ndarray], low: float, high: float,
           n: int) -> np.ndarray:
    """``n`` draws of ``draw`` kept inside [low, high] by redrawing the rare misses."""
    values = draw(n)
    bad = (values < low) | (values > high)
    while bad.any():
        values[bad] = draw(int(bad.sum()))
        bad = (values < low) | (values > high)
    return values


def luminosity_sb(radius: np.ndarray, temperature: np.ndarray) -> np.ndarray:
    """Luminosity (W) of a sphere radiating as a black body (Stefan-Boltzmann, solar scaling)."""
    return L_SUN * (radius / R_SUN) ** 2 * (temperature / T_SUN) ** 4


def _star_mass(rng: np.random.Generator, kind_index: int, n: int) -> np.ndarray:
    kind = STAR_KINDS[kind_index]
    low, high = MASS_RANGES.get(kind.label, (0.09 * M_SUN, np.inf))
    return redraw(rng, lambda m: lognormal(rng, kind.mass_median * M_SUN, kind.mass_sigma, m),
                  low, high, n)


def _star_size(rng: np.random.Generator, label: str, mass: np.ndarray) -> np.ndarray:
    n = len(mass)
    if label == "brown dwarf":
        return bodies.cold_hhe_radius(mass) * lognormal(rng, 1.0, 0.04, n)
    if label == "white dwarf":
        return bodies.white_dwarf_radius(mass) * lognormal(rng, 1.0, 0.02, n)
    if label == "neutron star":
        median, sigma, low, high = NS_RADIUS
        return redraw(rng, lambda m: lognormal(rng, median, sigma, m), low, high, n)
    if label == "black hole":
        return bodies.schwarzschild_radius(mass)
    return bodies.main_sequence_radius(mass) * lognormal(rng, 1.0, 0.05, n)


def star_properties(rng: np.random.Generator, code: np.ndarray) -> dict[str, np.ndarray]:
    """Mass (kg), radius (m), temperature (K) and luminosity (W) of stars of the given codes."""
    n = len(code)
    out = {k: np.full(n, np.nan) for k in ("mass", "radius", "temp", "lum")}
    for i, kind in enumerate(STAR_KINDS):
        where = np.flatnonzero(code == i)
        mass = _star_mass(rng, i, len(where))
        radius = _star_size(rng, kind.label, mass)
        if kind.label in MAIN_SEQUENCE:
            lum = bodies.main_sequence_luminosity(mass) * lognormal(rng, 1.0, 0.08, len(where))
            temp = T_SUN * (lum / L_SUN / (radius / R_SUN) ** 2) ** 0.25
        elif kind.temperature_median is not None:
            temp = lognormal(rng, kind.temperature_median, 0.3, len(where))
            lum = luminosity_sb(radius, temp)
        else:
            temp = lum = np.full(len(where), np.nan)
        for key, value in (("mass", mass), ("radius", radius), ("temp", temp), ("lum", lum)):
            out[key][where] = value
    return out


def systems(rng: np.random.Generator, n_systems: int) -> dict[str, np.ndarray]:
    """Primaries of ``n_systems`` systems, with a companion star in some (the heavier is primary).

    Returns per-system arrays: ``code``, ``mass``, ``radius``, ``temp``, ``lum``, ``age`` (years)
    and, for the companion, the same keys prefixed ``c_`` (NaN / -1 where there is none).
    """
    first = rng.choice(len(STAR_KINDS), n_systems, p=PRIMARY_SHARES)
    has_pair = rng.random(n_systems) < COMPANION_SHARE
    second = np.where(has_pair, rng.choice(len(STAR_KINDS), n_systems, p=COMPANION_SHARES), -1)
    a = star_properties(rng, first)
    b = star_properties(rng, np.where(has_pair, second, 0))
    swap = has_pair & (b["mass"] > a["mass"])
    out: dict[str, np.ndarray] = {"code": np.where(swap, second, first),
                                  "c_code": np.where(swap, first, second)}
    for key in ("mass", "radius", "temp", "lum"):
        out[key] = np.where(swap, b[key], a[key])
        out["c_" + key] = np.where(has_pair, np.where(swap, a[key], b[key]), np.nan)
    out["age"] = lognormal(rng, SYSTEM_AGE[0], SYSTEM_AGE[1], n_systems)
    out["hosts_planets"] = np.isin(out["code"], codes(*MAIN_SEQUENCE))
    return out


def age_seconds(age_years: np.ndarray) -> np.ndarray:
    """Ages in seconds, for comparing with tidal-locking times."""
    return age_years * YEAR
