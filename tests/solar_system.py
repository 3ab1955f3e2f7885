"""The Solar System as a normalised table: a real-data fixture for rule and engine tests.

Honest data typed from published tables, not tuned to pass any rule. Every real body must be
physically possible, so a rule that flags one here is worth a look (it may be a true nuance,
e.g. Mercury's 3:2 spin-orbit resonance, or a wrong rule).

Sources (REFERENCES.md values wherever it gives them; "memory" = recalled, not re-checked):
- mass, mean radius: JPL Solar System Dynamics physical parameters (REFERENCES.md); the Sun from
  IAU 2015 Resolution B3 (units.M_SUN, units.R_SUN).
- planets' semi-major axis and eccentricity: JPL "Keplerian elements for approximate positions
  of the major planets", J2000 (memory); sidereal orbit and rotation periods: NASA/NSSDCA
  planetary fact sheets (memory). Retrograde rotations are given as positive periods.
- moons' orbits: JPL mean elements (REFERENCES.md: Moon, Io, Titan, Phobos, Pan, Atlas,
  Prometheus) and NSSDCA satellite fact sheets otherwise (memory).
- ages: the Solar System's 4.568 Gyr (meteorite CAI ages; memory), rounded to 4.6e9 yr for all.
"""

from __future__ import annotations

from typing import Any

import polars as pl

from bodycensus.input.schema import CANONICAL_FIELDS, FIELD_TYPES
from bodycensus.science.physics.bodies import sphere_volume
from bodycensus.science.units import AU, DAY, HOUR, L_SUN, M_SUN, PLANET_RADII, R_SUN

KM = 1e3
SYSTEM = "Solar System"
AGE = 4.6e9  # years

# id, name, label, family, parent, mass kg, mean radius km, a km, e, period d, rotation h, locked
_Row = tuple[str, str, str, str, str, float, float, float, float, float, float | None, bool | None]

_PLANETS: list[_Row] = [
    ("mercury", "Mercury", "terrestrial planet", "rock", "sun", 0.330114e24, 2439.4,
     0.38709927 * AU / KM, 0.20563593, 87.969, 1407.6, False),  # 3:2 spin-orbit resonance
    ("venus", "Venus", "terrestrial planet", "rock", "sun", 4.86747e24, 6051.8,
     0.72333566 * AU / KM, 0.00677672, 224.701, 5832.6, False),  # retrograde rotation
    ("earth", "Earth", "terrestrial planet", "rock", "sun", 5.97237e24, 6371.0084,
     1.00000261 * AU / KM, 0.01671123, 365.256, 23.9345, False),
    ("mars", "Mars", "terrestrial planet", "rock", "sun", 0.641712e24, 3389.50,
     1.52371034 * AU / KM, 0.09339410, 686.980, 24.6229, False),
    ("jupiter", "Jupiter", "gas giant", "gas_giant", "sun", 1898.187e24, 69_911,
     5.20288700 * AU / KM, 0.04838624, 4332.589, 9.9250, False),
    ("saturn", "Saturn", "gas giant", "gas_giant", "sun", 568.3174e24, 58_232,
     9.53667594 * AU / KM, 0.05386179, 10_759.22, 10.656, False),
    ("uranus", "Uranus", "ice giant", "ice_giant", "sun", 86.8127e24, 25_362,
     19.18916464 * AU / KM, 0.04725744, 30_685.4, 17.24, False),  # retrograde rotation
    ("neptune", "Neptune", "ice giant", "ice_giant", "sun", 102.4126e24, 24_622,
     30.06992276 * AU / KM, 0.00859048, 60_189.0, 16.11, False),
    # Pluto's spin is locked to Charon, not to its parent the Sun; retrograde rotation.
    ("pluto", "Pluto", "dwarf planet", "rock_ice", "sun", 0.013030e24, 1188.3,
     39.48211675 * AU / KM, 0.24882730, 90_560.0, 153.2928, False),
]

# Regular moons rotate synchronously: rotation period = orbital period (None below means that).
_MOONS: list[_Row] = [
    ("moon", "Moon", "rocky moon", "rock", "earth", 7.3458e22, 1737.4,
     384_400, 0.0549, 27.3217, None, True),  # e: NSSDCA (memory)
    ("phobos", "Phobos", "small moon", "minor", "mars", 1.06e16, 11.08,
     9_376, 0.0151, 0.3189, None, True),  # e: NSSDCA (memory)
    # Deimos: mass 1.48e15 kg, mean radius 6.2 km, a, e, P all from memory (NSSDCA / JPL SSD).
    ("deimos", "Deimos", "small moon", "minor", "mars", 1.48e15, 6.2,
     23_458, 0.0003, 1.2624, None, True),
    ("io", "Io", "rocky moon", "rock", "jupiter", 8.9296e22, 1821.49,
     421_800, 0.004, 1.769, None, True),  # e: NSSDCA (memory)
    # Europa, Ganymede, Callisto orbits: NSSDCA Jovian satellite fact sheet (memory);
    # Callisto's mass 1.0759e23 kg and radius 2410.3 km: JPL SSD (memory).
    ("europa", "Europa", "rocky-icy moon", "rock_ice", "jupiter", 4.7986e22, 1560.80,
     671_100, 0.009, 3.551181, None, True),
    ("ganymede", "Ganymede", "rocky-icy moon", "rock_ice", "jupiter", 1.4815e23, 2631.20,
     1_070_400, 0.001, 7.154553, None, True),
    ("callisto", "Callisto", "rocky-icy moon", "rock_ice", "jupiter", 1.0759e23, 2410.3,
     1_882_700, 0.007, 16.689018, None, True),
    ("titan", "Titan", "rocky-icy moon", "rock_ice", "saturn", 1.3452e23, 2574.76,
     1_221_870, 0.0288, 15.945, None, True),  # e: NSSDCA (memory)
    # Triton orbits retrograde (the period is still positive); JPL SSD mass and radius, NSSDCA
    # orbit (all memory).
    ("triton", "Triton", "rocky-icy moon", "rock_ice", "neptune", 2.139e22, 1353.4,
     354_759, 0.000016, 5.876854, None, True),
    # Charon: mass and a as given in the brief (memory); radius 606.0 km JPL SSD, e and P
    # NSSDCA (memory).
    ("charon", "Charon", "rocky-icy moon", "rock_ice", "pluto", 1.586e21, 606.0,
     19_591, 0.0002, 6.387230, None, True),
]

# Saturn's ring-region moons: a and bulk density from REFERENCES.md (NSSDCA Saturnian satellite
# fact sheet); mean radius, e and P from memory of the same sheet. Mass = density x volume.
# Their spin is not well measured, so rotation and locking are left unknown.
_RING_MOONS: list[tuple[str, str, float, float, float, float, float]] = [
    # id, name, density kg m-3, mean radius km, a km, e, period d
    ("pan", "Pan", 420.0, 14.1, 133_584, 0.0000144, 0.575),
    ("atlas", "Atlas", 500.0, 14.9, 137_670, 0.0012, 0.602),
    ("prometheus", "Prometheus", 480.0, 43.1, 139_380, 0.0022, 0.613),
    # Daphnis: a and density REFERENCES.md; mean radius 3.8 km, e, P from memory.
    ("daphnis", "Daphnis", 340.0, 3.8, 136_505, 0.0000331, 0.594),
]

# Saturn's main rings as bodies of the ring family (PDS Rings Node "Vital statistics", in
# REFERENCES.md): id, name, inner edge km, outer edge km. Material not given (judged as ice).
_RINGS: list[tuple[str, str, float, float]] = [
    ("c_ring", "C ring", 74_491, 91_975),
    ("b_ring", "B ring", 91_975, 117_570),
    ("a_ring", "A ring", 122_170, 136_775),
]
RETROGRADE = {"triton"}  # Triton orbits Neptune retrograde (inclination ~157 deg; memory)


def _row(body: _Row) -> dict[str, Any]:
    """One fixture row in SI from a table line (km, days, hours)."""
    ident, name, label, family, parent, mass, radius_km, a_km, e, period_d, rot_h, locked = body
    period = period_d * DAY
    rotation = rot_h * HOUR if rot_h is not None else (period if locked else None)
    return {
        "id": ident, "name": name, "label": label, "family": family, "parent": parent,
        "system": SYSTEM, "mass": mass, "radius": radius_km * KM,
        "semi_major_axis": a_km * KM, "eccentricity": e, "period": period,
        "rotation_period": rotation, "tidally_locked": locked, "age": AGE,
        "temperature": None, "luminosity": None, "retrograde": ident in RETROGRADE,
    }


def _ring_row(ident: str, name: str, inner_km: float, outer_km: float) -> dict[str, Any]:
    """One of Saturn's rings: a row of the ring family whose parent is Saturn."""
    return {"id": ident, "name": name, "label": "planetary ring", "family": "ring",
            "parent": "saturn", "system": SYSTEM, "ring_inner": inner_km * KM,
            "ring_outer": outer_km * KM, "age": AGE}


def _ring_moon_row(ident: str, name: str, density: float, radius_km: float, a_km: float,
                   e: float, period_d: float) -> dict[str, Any]:
    """A small moon whose mass follows from its published bulk density and mean radius."""
    mass = density * sphere_volume(radius_km * KM)
    return _row((ident, name, "small moon", "minor", "saturn", mass, radius_km, a_km, e,
                 period_d, None, None))


SUN: dict[str, Any] = {
    "id": "sun", "name": "Sun", "label": "G2V", "family": "star", "parent": None,
    "system": SYSTEM, "mass": M_SUN, "radius": R_SUN,  # IAU 2015 Resolution B3 nominal
    "semi_major_axis": None, "eccentricity": None, "period": None,
    "rotation_period": 609.12 * HOUR,  # equatorial sidereal, NSSDCA Sun fact sheet (memory)
    "tidally_locked": None, "age": AGE,  # no parent to lock to
    "temperature": 5772.0, "luminosity": L_SUN,  # IAU 2015 Resolution B3 nominal T_eff and L
}

SOLAR_SYSTEM_ROWS: list[dict[str, Any]] = [
    SUN,
    *(_row(body) for body in _PLANETS),
    *(_row(body) for body in _MOONS),
    *(_ring_moon_row(*moon) for moon in _RING_MOONS),
    *(_ring_row(*ring) for ring in _RINGS),
]


def solar_system_frame() -> pl.DataFrame:
    """The rows as a normalised table (DEVELOPERS.md): canonical fields, ``_row`` 1..n, ``_bad``,
    ``_planet_radii`` (none: every ring edge is in metres)."""
    schema = {field: FIELD_TYPES[field] for field in CANONICAL_FIELDS}
    frame = pl.DataFrame(SOLAR_SYSTEM_ROWS, schema=schema)
    return frame.with_columns(
        pl.int_range(1, frame.height + 1, dtype=pl.Int64).alias("_row"),
        pl.lit(None, dtype=pl.String).alias("_bad"),
        pl.lit(None, dtype=pl.String).alias(PLANET_RADII),
    )
