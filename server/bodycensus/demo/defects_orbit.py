"""Planted orbit defects (one function per rule id), each in a system of its own.

Limits come from physics.orbits (Roche, Hill, Eggleton, mutual Hill radius); an edited orbit gets
its Kepler period and lock state recomputed, so it breaks only the rule it was planted for,
except where physics ties two rules together (a periapsis inside the parent is also inside the
Roche limit; a star overflowing its Roche lobe is inside the fluid Roche limit).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from bodycensus.demo.kinds import CODE, MOON_CODE0, MOON_CURVES, PLANET_CODE0
from bodycensus.demo.planter import Planter
from bodycensus.demo.stars import age_seconds
from bodycensus.science.physics import bodies, orbits
from bodycensus.science.units import M_EARTH


def _limits(p: Planter, mass: np.ndarray, radius: np.ndarray) -> dict[str, np.ndarray]:
    """For every row (with a trial mass and radius): parent radius, Roche limits, parent Hill."""
    t = p.t
    par = np.maximum(t["parent"], 0)
    grand = np.maximum(t["parent"][par], 0)
    parent_density = bodies.bulk_density(t["mass"][par], t["radius"][par])
    density = bodies.bulk_density(mass, radius)
    return {
        "parent_radius": t["radius"][par],
        "rigid": orbits.roche_rigid(t["radius"][par], parent_density, density),
        "fluid": orbits.roche_fluid(t["radius"][par], parent_density, density),
        "hill": orbits.hill_radius(t["a"][par], t["e"][par], t["mass"][par], t["mass"][grand]),
        "stable": np.where(t["retrograde"],
                           orbits.stable_hill_fraction(t["e"][par], t["e"], retrograde=True),
                           orbits.stable_hill_fraction(t["e"][par], t["e"])),
    }


def _move(p: Planter, rule: str, mask: np.ndarray, periapsis: np.ndarray) -> None:
    """Put picked rows of ``mask`` at a new periapsis (same e), then refresh their orbits."""
    rows = p.pick(mask)
    p.t["a"][rows] = periapsis[rows] / (1.0 - p.t["e"][rows])
    p.refresh_orbit(rows)
    p.record(rule, rows)


def periapsis_inside_parent(p: Planter) -> None:
    """A moon on an orbit so eccentric that its periapsis is half the planet's radius."""
    rows = p.pick(p.sole_moons())
    p.t["e"][rows] = 1.0 - 0.5 * p.parent_of(rows, "radius") / p.t["a"][rows]
    p.record("periapsis-inside-parent", rows)


def inside_rigid_roche(p: Planter) -> None:
    """A moon with periapsis midway (geometrically) between the planet's surface and rigid limit."""
    lim = _limits(p, p.t["mass"], p.t["radius"])
    q = np.sqrt(lim["parent_radius"] * lim["rigid"])
    _move(p, "inside-rigid-roche", p.sole_moons() & (lim["rigid"] > 1.3 * lim["parent_radius"]), q)


def inside_fluid_roche(p: Planter) -> None:
    """A moon with periapsis midway (geometrically) between the rigid and the fluid Roche limit."""
    lim = _limits(p, p.t["mass"], p.t["radius"])
    q = np.sqrt(lim["rigid"] * lim["fluid"])
    _move(p, "inside-fluid-roche", p.sole_moons() & (q > 1.2 * lim["parent_radius"]), q)


def roche_lobe_overflow(p: Planter) -> None:
    """A companion star brought so close that its radius is 1.25 x its Eggleton Roche lobe."""
    t = p.t
    par = np.maximum(t["parent"], 0)
    lobe = orbits.roche_lobe_radius(np.ones(len(par)), t["mass"] / t["mass"][par])
    q = t["radius"] / (1.25 * lobe)
    alone = (t["code"] < PLANET_CODE0) & (t["parent"] >= 0) & (p.children[par] == 1)
    _move(p, "roche-lobe-overflow", alone & p.leaves() & (q > 1.5 * t["radius"][par]), q)


def outside_hill_sphere(p: Planter) -> None:
    """A moon at 1.3 x its planet's Hill radius."""
    lim = _limits(p, p.t["mass"], p.t["radius"])
    rows = p.pick(p.sole_moons())
    p.t["a"][rows] = 1.3 * lim["hill"][rows]
    p.refresh_orbit(rows)
    p.record("outside-hill-sphere", rows)


def beyond_stable_hill(p: Planter) -> None:
    """A moon halfway between the stable limit for its orbit's sense and the edge of the Hill
    sphere."""
    lim = _limits(p, p.t["mass"], p.t["radius"])
    rows = p.pick(p.sole_moons())
    p.t["a"][rows] = 0.5 * (1.0 + lim["stable"][rows]) * lim["hill"][rows]
    p.refresh_orbit(rows)
    p.record("beyond-stable-hill", rows)


def kepler_mismatch(p: Planter) -> None:
    """A planet whose catalogued period is 1.25 x the Kepler period."""
    rows = p.pick(p.planets())
    p.t["period"][rows] *= 1.25
    p.record("kepler-mismatch", rows)


def _outer_pairs(p: Planter) -> tuple[np.ndarray, np.ndarray]:
    """(inner, outer) rows of adjacent childless planets where the outer is its system's last."""
    t, n = p.t, len(p.t["code"])
    j = np.arange(1, n)
    last = np.append((t["tier"][2:] != 1) | (t["sys"][2:] != t["sys"][1:-1]), True)
    ok = (t["tier"][j] == 1) & (t["tier"][j - 1] == 1) & (t["sys"][j] == t["sys"][j - 1]) & last
    ok &= p.planets()[j] & p.planets()[j - 1] & p.leaves()[j] & p.leaves()[j - 1]
    return j[ok] - 1, j[ok]


def _clear_of_inner(p: Planter, i: np.ndarray, new_periapsis: np.ndarray) -> np.ndarray:
    """Whether a new periapsis of row ``i`` stays clear of its star and of its inner sibling."""
    t = p.t
    lim = _limits(p, t["mass"], t["radius"])
    edge = np.maximum(lim["parent_radius"][i], lim["fluid"][i])
    has_inner = (t["tier"][i - 1] == 1) & (t["sys"][i - 1] == t["sys"][i])
    inner_apo = np.where(has_inner, orbits.apoapsis(t["a"][i - 1], t["e"][i - 1]), 0.0)
    return new_periapsis > 1.2 * np.maximum(edge, inner_apo)


Check = Callable[[Planter, np.ndarray, np.ndarray], np.ndarray]
Edit = Callable[[Planter, np.ndarray, np.ndarray], None]


def _pair_planting(rule: str, check: Check, edit: Edit) -> Callable[[Planter], None]:
    """Plant ``rule`` on outer planets of pairs that ``check`` accepts, by ``edit``."""

    def plant(p: Planter) -> None:
        inner, outer = _outer_pairs(p)
        mask = np.zeros(len(p.t["code"]), dtype=bool)
        mask[outer[check(p, inner, outer)]] = True
        rows = p.pick(mask)
        edit(p, rows - 1, rows)
        p.record(rule, rows, rows - 1)

    plant.__doc__ = f"Adjacent planets breaking {rule}; the finding belongs to the outer one."
    return plant


def _crossing_e(p: Planter, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    """The inner planet's e that puts its apoapsis at 1.1 x the outer one's periapsis."""
    return 1.1 * orbits.periapsis(p.t["a"][j], p.t["e"][j]) / p.t["a"][i] - 1.0


def _can_cross(p: Planter, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    e_new = _crossing_e(p, i, j)
    return (e_new > 0.05) & (e_new < 0.6) \
        & _clear_of_inner(p, i, orbits.periapsis(p.t["a"][i], e_new))


def _cross(p: Planter, i: np.ndarray, j: np.ndarray) -> None:
    p.t["e"][i] = _crossing_e(p, i, j)


def _crowd_hill(p: Planter, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    """The mutual Hill radius of the pair (Gladman 1993)."""
    t = p.t
    return orbits.mutual_hill_radius(t["a"][i], t["mass"][i], t["mass"][j], p.parent_of(i, "mass"))


def _can_crowd(p: Planter, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    e_new = 0.2 * _crowd_hill(p, i, j) / p.t["a"][i]
    return _clear_of_inner(p, i, orbits.periapsis(p.t["a"][i], e_new))


def _crowd(p: Planter, i: np.ndarray, j: np.ndarray) -> None:
    """Move the outer planet to 2 mutual Hill radii from the inner one, both nearly circular."""
    hill = _crowd_hill(p, i, j)
    e_new = 0.2 * hill / p.t["a"][i]
    p.t["a"][j], p.t["e"][i], p.t["e"][j] = p.t["a"][i] + 2.0 * hill, e_new, e_new
    p.refresh_orbit(j)


def _can_copy(p: Planter, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    return p.t["mass"][i] > 0


def _copy(p: Planter, i: np.ndarray, j: np.ndarray) -> None:
    """List the inner planet again as the outer one, as a second paper's values would give it:
    a 0.2 % longer orbit, 10 % more mass, the same size."""
    t = p.t
    t["a"][j], t["e"][j] = t["a"][i] * 1.002, t["e"][i]
    t["mass"][j], t["radius"][j] = t["mass"][i] * 1.1, t["radius"][i]
    p.refresh_orbit(j)


crossing_orbits = _pair_planting("crossing-orbits", _can_cross, _cross)
duplicate_orbit = _pair_planting("duplicate-orbit", _can_copy, _copy)
hill_spacing = _pair_planting("hill-spacing", _can_crowd, _crowd)


def _moon_radius(code: np.ndarray, mass: np.ndarray) -> np.ndarray:
    """Radius a moon of this label and mass gets from its label's curve at the median factor."""
    radius = np.full(len(code), np.nan)
    for moon_code, (curve, median, _) in enumerate(MOON_CURVES, start=MOON_CODE0):
        w = code == moon_code
        radius[w] = bodies.composition_radius(mass[w], curve) * median ** (-1 / 3)
    return radius


def _resized_moons(p: Planter, rows: np.ndarray, mass: np.ndarray) -> None:
    """Give moons a new mass and the radius their label's curve gives it."""
    p.t["mass"][rows] = mass
    p.t["radius"][rows] = _moon_radius(p.t["code"][rows], mass)
    p.refresh_orbit(rows)


def _reweighed_moons(p: Planter, mass: np.ndarray, a: np.ndarray) -> np.ndarray:
    """Sole moons that, with a new mass and semi-major axis, stay well clear of the Roche limit
    and well inside the stable part of the Hill sphere."""
    lim = _limits(p, mass, _moon_radius(p.t["code"], mass))
    with np.errstate(invalid="ignore"):
        return p.sole_moons() & (orbits.periapsis(a, p.t["e"]) > 2.0 * lim["fluid"]) \
            & (orbits.apoapsis(a, p.t["e"]) < 0.5 * lim["stable"] * lim["hill"])


def heavier_than_parent(p: Planter) -> None:
    """A rocky moon 1.3 x as heavy as the small rocky planet it orbits."""
    t, every = p.t, np.arange(len(p.t["code"]))
    mass = 1.3 * p.parent_of(every, "mass")
    rocky_parent = np.isin(p.parent_of(every, "code"),
                           [CODE["terrestrial world"], CODE["super-earth"], CODE["iron world"]])
    small = rocky_parent & (p.parent_of(every, "mass") < 0.3 * M_EARTH)
    rows = p.pick(_reweighed_moons(p, mass, t["a"]) & small & (t["code"] == CODE["rocky moon"]))
    _resized_moons(p, rows, mass[rows])
    p.record("heavier-than-parent", rows)


def binary_barycentre(p: Planter) -> None:
    """A moon of 8 % of its planet's mass, far enough out that the barycentre leaves the planet."""
    t, every = p.t, np.arange(len(p.t["code"]))
    fraction = 0.08
    mass = fraction * p.parent_of(every, "mass")
    a_new = 1.6 * p.parent_of(every, "radius") * (1.0 + fraction) / fraction
    rows = p.pick(_reweighed_moons(p, mass, a_new))
    t["a"][rows] = a_new[rows]
    _resized_moons(p, rows, mass[rows])
    p.record("binary-barycentre", rows)


def tidal_lock_age(p: Planter) -> None:
    """A planet marked as tidally locked, though despinning would take > 100 x its age even for
    the softest parameters (ice rigidity, Q = 100)."""
    t = p.t
    with np.errstate(invalid="ignore", divide="ignore"):
        soft = np.ones(len(t["a"]))  # ice rigidity 4e9 Pa, Q = 100
        t_lock = orbits.tidal_lock_time(t["a"], t["mass"], t["radius"], t["parent_mass"],
                                        4e9 * soft, 100.0 * soft)
        slow = t_lock > 100.0 * age_seconds(t["age"])
    keep_out = np.isin(t["code"], [CODE["ice giant"], CODE["asteroid"]])
    rows = p.pick(p.planets() & ~t["locked"] & slow & ~keep_out)
    t["locked"][rows] = True
    t["rotation"][rows] = t["period"][rows]
    p.record("tidal-lock-age", rows)


ORBIT_PLANTINGS: tuple[Callable[[Planter], None], ...] = (
    roche_lobe_overflow, periapsis_inside_parent, inside_rigid_roche, inside_fluid_roche,
    outside_hill_sphere, beyond_stable_hill, kepler_mismatch, crossing_orbits, hill_spacing,
    heavier_than_parent, binary_barycentre, tidal_lock_age, duplicate_orbit,
)
