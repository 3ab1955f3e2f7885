"""Planted defects of data integrity and of single bodies (one function per rule id).

Each edit breaks its own rule clearly and, where physics allows, no other: sizes follow masses
through the same curves the population used. Some rules cannot be broken alone: a remnant past
its mass limit is also an outlier of its label, a unit slip wrecks the density.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from bodycensus.demo.kinds import CODE
from bodycensus.demo.planter import Planter
from bodycensus.science.physics import bodies, orbits
from bodycensus.science.units import AU, M_JUPITER, M_SUN

BAD_CELLS = ("1,2e3", "n/a", "3OO", "12..5")  # unreadable temperatures, in turn


def missing_value(p: Planter) -> None:
    """A moon with a parent but neither a semi-major axis nor a period (from a period and the
    parent's mass the engine would derive the axis)."""
    rows = p.pick(p.sole_moons())
    p.t["a"][rows] = np.nan
    p.t["period"][rows] = np.nan
    p.record("missing-value", rows)


def non_positive(p: Planter) -> None:
    """A negative rotation period on a neutron star (no other rule reads it; a small label, so
    the stray sign disturbs few distributions)."""
    rows = p.pick(p.is_code(CODE["neutron star"]))
    p.t["rotation"][rows] *= -1.0
    p.record("non-positive", rows)


def duplicate_id(p: Planter) -> None:
    """A moon that carries another moon's id."""
    rows = p.pick(p.sole_moons(), 2 * p.per_rule)
    half = len(rows) // 2
    for row, original in zip(rows[half:], rows[:half], strict=False):
        p.duplicates[int(row)] = int(original)
    p.record("duplicate-id", rows[:half], rows[half:2 * half])


def orphan_parent(p: Planter) -> None:
    """A moon whose parent id names no body."""
    rows = p.pick(p.sole_moons())
    p.orphans.extend(int(r) for r in rows)
    p.record("orphan-parent", rows)


def parent_cycle(p: Planter) -> None:
    """A planet made to orbit its own only moon: each is the other's parent."""
    moons = p.pick(p.sole_moons())
    planets = p.t["parent"][moons]
    p.t["parent"][planets] = moons
    p.record("parent-cycle", planets, moons)
    p.record("parent-cycle", moons, planets)


def unit_slip(p: Planter) -> None:
    """A terrestrial world's radius given in metres in the km column (x1000)."""
    rows = p.pick(p.is_code(CODE["terrestrial world"]) & p.leaves() & ~p.t["locked"])
    p.t["radius"][rows] *= 1000.0
    p.record("unit-slip", rows)


def bad_eccentricity(p: Planter) -> None:
    """A moon with a negative eccentricity (its periapsis, a(1 - e), stays well outside)."""
    rows = p.pick(p.sole_moons())
    p.t["e"][rows] = -(p.t["e"][rows] + 0.05)
    p.record("bad-eccentricity", rows)


def bad_cell(p: Planter) -> None:
    """Unreadable text in the numeric temperature column."""
    rows = p.pick(np.isfinite(p.t["temp"]))
    for i, row in enumerate(rows):
        p.bad_cells[int(row)] = BAD_CELLS[i % len(BAD_CELLS)]
    p.record("bad-cell", rows)


def denser_than_iron(p: Planter) -> None:
    """An iron world 1.25 x denser than compressed pure iron at its mass (Seager et al. 2007)."""
    rows = p.pick(p.is_code(CODE["iron world"]) & p.leaves())
    p.t["radius"][rows] = bodies.composition_radius(p.t["mass"][rows], "iron") * 1.25 ** (-1 / 3)
    p.record("denser-than-iron", rows)


def family_density(p: Planter) -> None:
    """A gas giant 4 x denser than a cold H/He sphere of its mass (the band stops at 3 x)."""
    rows = p.pick(p.is_code(CODE["gas giant"]) & p.leaves())
    p.t["radius"][rows] = bodies.cold_hhe_radius(p.t["mass"][rows]) * 4.0 ** (-1 / 3)
    p.record("family-density", rows)


def oversized_cold_body(p: Planter) -> None:
    """A gas giant of over a Jupiter mass, 2.5 x the cold H/He radius, far from its star (beyond
    0.15 au, where no giant is heated to that size)."""
    t = p.t
    big = t["mass"] > 1.2 * M_JUPITER
    new_density = bodies.bulk_density(t["mass"], 2.5 * bodies.cold_hhe_radius(t["mass"]))
    parent = np.maximum(t["parent"], 0)
    roche = orbits.roche_fluid(t["radius"][parent],
                               bodies.bulk_density(t["mass"][parent], t["radius"][parent]),
                               new_density)
    far = (orbits.periapsis(t["a"], t["e"]) > 3.0 * roche) & (t["a"] > 0.15 * AU)  # not hot
    rows = p.pick(p.is_code(CODE["gas giant"]) & p.leaves() & big & far)
    t["radius"][rows] = 2.5 * bodies.cold_hhe_radius(t["mass"][rows])
    p.record("oversized-cold-body", rows)


def _reweigh(label: str, mass: float, radius: Callable[[np.ndarray], np.ndarray] | None,
             rule: str) -> Callable[[Planter], None]:
    """A planting that gives childless primaries of ``label`` a new mass (and radius)."""

    def plant(p: Planter) -> None:
        rows = p.pick(p.is_code(CODE[label]) & p.leaves() & (p.t["parent"] < 0))
        p.t["mass"][rows] = mass
        if radius is not None:
            p.t["radius"][rows] = radius(p.t["mass"][rows])
        p.record(rule, rows)

    plant.__doc__ = f"A {label} of {mass:.4g} kg ({rule})."
    return plant


over_chandrasekhar = _reweigh("white dwarf", 1.6 * M_SUN, None, "over-chandrasekhar")
over_neutron_star_max = _reweigh("neutron star", 3.4 * M_SUN, None, "over-neutron-star-max")
under_hydrogen_burning = _reweigh("red dwarf", 0.065 * M_SUN, bodies.main_sequence_radius,
                                  "under-hydrogen-burning")
# A star with a white dwarf's radius at its mass (Nauenberg 1972): degenerate by its density.
degenerate_star = _reweigh("red dwarf", 0.6 * M_SUN, bodies.white_dwarf_radius, "degenerate-star")
brown_dwarf_range = _reweigh("brown dwarf", 11.0 * M_JUPITER, bodies.cold_hhe_radius,
                             "brown-dwarf-range")


def label_outlier(p: Planter) -> None:
    """An icy moon of 0.35 x the compressed-ice density: inside its family band, far off its label.
    """
    t = p.t
    new_radius = bodies.composition_radius(t["mass"], "water_ice") * 0.35 ** (-1 / 3)
    parent = np.maximum(t["parent"], 0)
    roche = orbits.roche_fluid(t["radius"][parent],
                               bodies.bulk_density(t["mass"][parent], t["radius"][parent]),
                               bodies.bulk_density(t["mass"], new_radius))
    room = orbits.periapsis(t["a"], t["e"]) > 2.0 * np.maximum(roche, t["radius"][parent])
    rows = p.pick(p.is_code(CODE["icy moon"]) & room & (t["parent"] >= 0))
    t["radius"][rows] = new_radius[rows]
    p.refresh_orbit(rows)
    p.record("label-outlier", rows)


def mass_upper_limit(p: Planter) -> None:
    """A terrestrial world whose mass uncertainty (1.5x the mass) makes the mass an upper limit.
    """
    rows = p.pick(p.is_code(CODE["terrestrial world"]) & p.leaves())
    p.t["mass_err"][rows] = 1.5 * p.t["mass"][rows]
    p.record("mass-upper-limit", rows)


BODY_PLANTINGS: tuple[Callable[[Planter], None], ...] = (  # the scarce targets first
    over_chandrasekhar, over_neutron_star_max, under_hydrogen_burning, brown_dwarf_range,
    missing_value, non_positive, duplicate_id, orphan_parent, parent_cycle, unit_slip,
    bad_eccentricity, bad_cell,
    denser_than_iron, family_density, oversized_cold_body, label_outlier, degenerate_star,
    mass_upper_limit,
)
