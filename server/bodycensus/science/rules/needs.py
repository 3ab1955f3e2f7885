"""What each column a rule needs is, in a catalogue's own terms: the coverage table says why a
body was skipped ("without a semi-major axis") instead of naming the engine's working columns.
"""

from __future__ import annotations

_ORBIT = "an orbit (semi-major axis)"
_DENSITIES = "densities of the body and its parent (masses and radii)"
NEEDS_IN_WORDS: dict[str, str] = {
    "id": "an id", "label": "a label", "parent": "a parent", "eccentricity": "an eccentricity",
    "age": "an age", "period": "an orbital period", "_mass": "a mass", "_radius": "a radius",
    "_a": _ORBIT, "periapsis": _ORBIT, "density": "a mass and a radius",
    "_band_low": "a density band for its family at its mass (none for unknown or black_hole, "
                 "or a mass past the curves)",
    "parent_radius": "the parent's radius", "parent_mass": "the parent's mass",
    "roche_rigid": _DENSITIES, "roche_fluid": _DENSITIES,
    "parent_hill_radius": "the parent's own orbit around a body with a mass",
    "stable_hill_limit": "the parent's own orbit around a body with a mass",
    "period_ratio": "an orbital period, a semi-major axis given (not derived from the period) "
                    "and the parent's mass",
    "inner_apoapsis": "a sibling further in", "inner_a": "a sibling further in",
    "inner_mass": "a sibling further in with a mass",
    "barycentre_offset": "masses of the body and its parent",
    "tidal_lock_time": "a mass, a radius, an orbit and the parent's mass",
    "tidal_heat_flux": "a mass, a radius, an eccentric orbit and the parent's mass",
    "life_to_age": "an orbit decaying by tides and an age",
    "tidal_decay_time": "an orbit decaying by tides",
    "ring_inner_edge": "a ring's inner edge", "ring_outer_edge": "a ring's outer edge",
    "ring_planet_radius": "the radius of the ring's planet",
    "ring_roche_fluid": "the radius and density of the ring's planet",
    "_ring_planet_hill": "the orbit of the ring's planet around a body with a mass",
    "ring_around": "a ring around its parent",
}


def in_words(column: str) -> str:
    """What a needed column stands for, as a curator would say it."""
    return NEEDS_IN_WORDS.get(column, column.removeprefix("_").replace("_", " "))
