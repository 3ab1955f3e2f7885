"""The demo catalogue's body kinds: labels, their families and the smooth laws each is drawn from.

A generator picks a body's kind first and then draws its properties from that kind's own
log-normal laws, so no label is cut out of another by a hard threshold. Every law is centred
far (>= 4 sigma) from the physical limit it must respect, so that rejection almost never bites.
Medians are in the units named in each field; sigmas are natural-log widths.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bodycensus.science.families import FAMILY_PARAMETERS, guess_family


@dataclass(frozen=True)
class StarKind:
    """A stellar (or substellar) kind: mass law in solar masses, luminosity or surface law."""

    label: str
    mass_median: float  # M_sun
    mass_sigma: float
    temperature_median: float | None  # K; None: from the main-sequence luminosity and radius


@dataclass(frozen=True)
class PlanetKind:
    """A planet-like kind orbiting a star: mass law, how its size follows, spin and moons."""

    label: str
    share: float  # probability among planet-like bodies
    mass_median: float  # M_earth (asteroids: unused, they are drawn by radius)
    mass_sigma: float
    curve: str  # "rock" | "iron" | "water_ice" (density x factor) or "cold_hhe" (radius x factor)
    factor_median: float
    factor_sigma: float
    spin_median_h: float
    spin_sigma: float
    moons: float  # mean number of moons when there is ample room
    rank: float  # typical order from the star outward


STAR_KINDS: tuple[StarKind, ...] = (
    StarKind("red dwarf", 0.30, 0.30, None),
    StarKind("orange dwarf star", 0.70, 0.20, None),
    StarKind("yellow dwarf star", 1.05, 0.15, None),
    StarKind("blue-white star", 1.6, 0.20, None),
    StarKind("brown dwarf", 32.0 / 1047.57, 0.18, 1300.0),
    StarKind("white dwarf", 0.68, 0.075, 9000.0),
    StarKind("neutron star", 1.40, 0.035, 6e5),
    StarKind("black hole", 9.0, 0.35, None),
)
PRIMARY_SHARES = (0.52, 0.17, 0.12, 0.05, 0.07, 0.05, 0.012, 0.008)
COMPANION_SHARES = (0.45, 0.12, 0.06, 0.0, 0.20, 0.17, 0.0, 0.0)
MAIN_SEQUENCE = ("red dwarf", "orange dwarf star", "yellow dwarf star", "blue-white star")

PLANET_KINDS: tuple[PlanetKind, ...] = (
    PlanetKind("terrestrial world", 0.20, 0.4, 0.9, "rock", 1.1, 0.12, 24.0, 0.8, 0.5, 1.0),
    PlanetKind("super-earth", 0.14, 4.0, 0.45, "rock", 1.1, 0.12, 20.0, 0.7, 0.5, 1.5),
    PlanetKind("iron world", 0.04, 0.3, 0.6, "iron", 0.8, 0.04, 30.0, 0.8, 0.1, 0.5),
    PlanetKind("ocean world", 0.07, 2.0, 0.5, "water_ice", 1.35, 0.08, 22.0, 0.6, 0.3, 2.0),
    PlanetKind("ice world", 0.07, 0.5, 0.7, "water_ice", 1.0, 0.10, 28.0, 0.7, 0.4, 4.0),
    PlanetKind("ice giant", 0.10, 15.0, 0.4, "water_ice", 0.42, 0.12, 16.0, 0.25, 2.0, 5.0),
    PlanetKind("gas giant", 0.10, 300.0, 0.35, "cold_hhe", 1.03, 0.05, 11.0, 0.25, 3.0, 4.5),
    PlanetKind("dwarf planet", 0.05, 0.03, 1.0, "rock", 0.9, 0.07, 30.0, 0.8, 0.2, 3.0),
    PlanetKind("icy planetoid", 0.05, 0.03, 1.0, "water_ice", 1.15, 0.10, 30.0, 0.8, 0.2, 4.5),
    PlanetKind("asteroid", 0.24, 0.0, 0.0, "rock", 1.0, 0.0, 8.0, 0.8, 0.0, 2.5),
    PlanetKind("hot gas giant", 0.0, 250.0, 0.4, "cold_hhe", 1.25, 0.06, 10.0, 0.3, 1.0, 0.0),
)
HOT_GIANT_SHARE = 0.06  # chance that a system's innermost planet is a hot gas giant
ASTEROID_RADIUS_KM = (25.0, 0.9)  # median km, sigma; density below
ASTEROID_DENSITY = (2000.0, 0.28)  # kg m-3 median, sigma

MOON_LABELS = ("rocky moon", "icy moon")
MOON_CURVES = (("rock", 0.82, 0.06), ("water_ice", 1.25, 0.10))  # curve, factor median, sigma
MOON_MASS_FRACTION = (3e-4, -0.35, 0.8)  # median x (M_planet/M_earth)^slope, sigma
MOON_SPIN = (15.0, 0.7)  # h: median, sigma (unlocked moons)

MOON_RETROGRADE_SHARE = 0.1  # moons on retrograde orbits (captured ones; a round figure)

# Rings: a share of gas and ice giants carry one, half as a row of its own (the ring family),
# half as columns of the planet; edges in planet radii. The inner edge sits just above the
# planet, the outer edge well inside the fluid Roche limit of its material (solid ice when the
# catalogue leaves the material out) and inside the planet's innermost moon.
RING_LABEL = "planetary ring"
RINGED_LABELS = ("gas giant", "ice giant")
RING_SHARE, RING_AS_BODY, RING_MATERIAL_SHARE = 0.35, 0.5, 0.5
RING_INNER = (1.3, 0.08)  # planet radii: median, sigma
RING_OUTER = (0.72, 0.08)  # fraction of the fluid Roche limit for its material: median, sigma
RING_MATERIAL = (600.0, 0.2)  # kg m-3: porous icy particles (a round figure), median, sigma

LABELS: tuple[str, ...] = (
    tuple(k.label for k in STAR_KINDS) + tuple(k.label for k in PLANET_KINDS) + MOON_LABELS
    + (RING_LABEL,)
)
CODE: dict[str, int] = {label: i for i, label in enumerate(LABELS)}
FAMILY_OF: tuple[str, ...] = tuple(guess_family(label) for label in LABELS)
RIGIDITY = np.array([FAMILY_PARAMETERS[f].rigidity for f in FAMILY_OF])  # Pa, by label code
QUALITY = np.array([FAMILY_PARAMETERS[f].quality_factor for f in FAMILY_OF])  # tidal Q
PLANET_CODE0 = len(STAR_KINDS)
MOON_CODE0 = PLANET_CODE0 + len(PLANET_KINDS)
RING_CODE = CODE[RING_LABEL]  # after the moons: codes MOON_CODE0 .. RING_CODE - 1 are moons


def lognormal(rng: np.random.Generator, median: float | np.ndarray, sigma: float | np.ndarray,
              n: int) -> np.ndarray:
    """Log-normal draws with the given median and natural-log width."""
    return np.asarray(median) * np.exp(np.asarray(sigma) * rng.standard_normal(n))


def codes(*labels: str) -> np.ndarray:
    """Label codes of the given labels."""
    return np.array([CODE[label] for label in labels])
