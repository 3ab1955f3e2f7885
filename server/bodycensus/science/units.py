"""Physical constants (each with its published source) and unit names, parsing and conversion.

Everything inside bodycensus is SI (kg, m, s, K, W) except ages, which are in years.
This module knows nothing else in the package.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from bodycensus.errors import InputError

# --- constants -------------------------------------------------------------------------------
G = 6.67430e-11  # m3 kg-1 s-2; CODATA 2018 (unchanged in CODATA 2022)
AU = 149_597_870_700.0  # m; IAU 2012 Resolution B2 (exact)
G0 = 9.80665  # m s-2; standard gravity (CGPM 1901, exact)
SPEED_OF_LIGHT = 299_792_458.0  # m s-1; SI definition (exact)

GM_SUN = 1.3271244e20  # m3 s-2; IAU 2015 Resolution B3 nominal
GM_EARTH = 3.986004e14  # m3 s-2; IAU 2015 Resolution B3 nominal
GM_JUPITER = 1.2668653e17  # m3 s-2; IAU 2015 Resolution B3 nominal
M_SUN = GM_SUN / G  # kg; IAU 2015 B3 nominal GM divided by CODATA 2018 G (as astropy does)
M_EARTH = GM_EARTH / G  # kg
M_JUPITER = GM_JUPITER / G  # kg
R_SUN = 6.957e8  # m; IAU 2015 Resolution B3 nominal
R_EARTH = 6.3781e6  # m; IAU 2015 Resolution B3 nominal equatorial radius
R_JUPITER = 7.1492e7  # m; IAU 2015 Resolution B3 nominal equatorial radius
L_SUN = 3.828e26  # W; IAU 2015 Resolution B3 nominal

HOUR = 3600.0  # s
DAY = 86_400.0  # s
YEAR = 365.25 * DAY  # s; Julian year (IAU)

# --- units -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Unit:
    """A named unit: its dimension and the factor that turns a value in it into SI.

    A relative unit (``relative=True``) is a multiple of a length the catalogue itself gives:
    ``planet_radius`` is the radius of the planet a ring circles, so its SI value is only known
    once that planet's radius is (``to_si`` is then 1: the number of those radii)."""

    name: str
    dimension: str  # mass | length | time | density | temperature | power | age | angle | 1
    to_si: float
    relative: bool = False


_UNITS: tuple[Unit, ...] = (
    Unit("kg", "mass", 1.0),
    Unit("g", "mass", 1e-3),
    Unit("earth_mass", "mass", M_EARTH),
    Unit("jupiter_mass", "mass", M_JUPITER),
    Unit("solar_mass", "mass", M_SUN),
    Unit("m", "length", 1.0),
    Unit("km", "length", 1e3),
    Unit("earth_radius", "length", R_EARTH),
    Unit("jupiter_radius", "length", R_JUPITER),
    Unit("solar_radius", "length", R_SUN),
    Unit("au", "length", AU),
    Unit("planet_radius", "length", 1.0, relative=True),
    Unit("s", "time", 1.0),
    Unit("h", "time", HOUR),
    Unit("d", "time", DAY),
    Unit("yr", "time", YEAR),
    Unit("kg/m3", "density", 1.0),
    Unit("g/cm3", "density", 1000.0),
    Unit("K", "temperature", 1.0),
    Unit("W", "power", 1.0),
    Unit("solar_luminosity", "power", L_SUN),
    Unit("years", "age", 1.0),
    Unit("Myr", "age", 1e6),
    Unit("Gyr", "age", 1e9),
    Unit("deg", "angle", math.pi / 180.0),
    Unit("rad", "angle", 1.0),
    Unit("1", "dimensionless", 1.0),
)
UNITS: dict[str, Unit] = {u.name: u for u in _UNITS}

# Other spellings seen in headers, lower-cased with spaces, dots and dashes removed.
_ALIASES: dict[str, str] = {
    "kilogram": "kg", "kilograms": "kg", "gram": "g", "grams": "g",
    "mearth": "earth_mass", "me": "earth_mass", "m_earth": "earth_mass", "earthmass": "earth_mass",
    "earthmasses": "earth_mass", "m_e": "earth_mass", "m⊕": "earth_mass",
    "mjup": "jupiter_mass", "m_jup": "jupiter_mass", "mj": "jupiter_mass", "m_j": "jupiter_mass",
    "jupitermass": "jupiter_mass", "jupitermasses": "jupiter_mass", "m_jupiter": "jupiter_mass",
    "jovmass": "jupiter_mass",  # the NASA Exoplanet Archive's spelling
    "msun": "solar_mass", "m_sun": "solar_mass", "msol": "solar_mass", "m_sol": "solar_mass",
    "solarmass": "solar_mass", "solarmasses": "solar_mass", "m☉": "solar_mass",
    "meter": "m", "meters": "m", "metre": "m", "metres": "m",
    "kilometer": "km", "kilometers": "km", "kilometre": "km", "kilometres": "km",
    "rearth": "earth_radius", "re": "earth_radius", "r_earth": "earth_radius",
    "r_e": "earth_radius", "earthradius": "earth_radius", "earthradii": "earth_radius",
    "rjup": "jupiter_radius", "r_jup": "jupiter_radius", "rj": "jupiter_radius",
    "r_j": "jupiter_radius", "jupiterradius": "jupiter_radius", "jupiterradii": "jupiter_radius",
    "rsun": "solar_radius", "r_sun": "solar_radius", "rsol": "solar_radius",
    "r_sol": "solar_radius", "solarradius": "solar_radius", "solarradii": "solar_radius",
    "rplanet": "planet_radius", "r_planet": "planet_radius", "rp": "planet_radius",
    "r_p": "planet_radius", "planetradius": "planet_radius", "planetradii": "planet_radius",
    "r_pl": "planet_radius", "rpl": "planet_radius",
    "degree": "deg", "degrees": "deg", "°": "deg", "radian": "rad", "radians": "rad",
    "ua": "au", "astronomicalunit": "au", "astronomicalunits": "au",
    "sec": "s", "second": "s", "seconds": "s",
    "hr": "h", "hour": "h", "hours": "h", "hrs": "h",
    "day": "d", "days": "d",
    "y": "yr", "year": "yr", "years": "yr", "a": "yr", "yrs": "yr",
    "kg/m^3": "kg/m3", "kgm3": "kg/m3", "kgm^3": "kg/m3", "kg/m³": "kg/m3",
    "g/cm^3": "g/cm3", "gcm3": "g/cm3", "g/cc": "g/cm3", "g/cm³": "g/cm3",
    "kelvin": "K", "k": "K", "watt": "W", "watts": "W", "w": "W",
    "lsun": "solar_luminosity", "l_sun": "solar_luminosity", "lsol": "solar_luminosity",
    "myr": "Myr", "gyr": "Gyr",
}

# Which dimension each canonical field has (ages are in years, not seconds).
FIELD_DIMENSIONS: dict[str, str] = {
    "mass": "mass",
    "radius": "length",
    "semi_major_axis": "length",
    "period": "time",
    "rotation_period": "time",
    "age": "age",
    "temperature": "temperature",
    "luminosity": "power",
    "eccentricity": "dimensionless",
    "inclination": "angle",
    "ring_inner": "length",
    "ring_outer": "length",
    "ring_mass": "mass",
    "ring_density": "density",
}
# Measurement uncertainties: (field, its value's field). ``X_error`` is the symmetric or upper
# (+) uncertainty of X, ``X_error_low`` the lower (-) one where a catalogue gives two; both in
# the value's dimension (and, unless their header says otherwise, in the value's unit).
ERROR_FIELDS: dict[str, str] = {
    f"{value}{side}": value
    for value in ("mass", "radius", "semi_major_axis", "period")
    for side in ("_error", "_error_low")
}
FIELD_DIMENSIONS.update({error: FIELD_DIMENSIONS[value] for error, value in ERROR_FIELDS.items()})
# Fields that may be given in a relative unit (radii of the ring's planet).
RELATIVE_FIELDS: frozenset[str] = frozenset({"ring_inner", "ring_outer"})
# The normalised table's column naming (comma-joined) the fields a row gives in such radii.
PLANET_RADII = "_planet_radii"
# The normalised table's column giving how precisely the semi-major axis was printed: half a unit
# of its last printed digit over its value (0.0510 -> 0.00005 / 0.051 ~ 0.1 %); null where the
# file gave a number, not text, or wrote it with an exponent.
A_PRINTED = "_a_printed"
SI_UNIT: dict[str, str] = {
    "mass": "kg", "length": "m", "time": "s", "density": "kg/m3", "temperature": "K",
    "power": "W", "age": "years", "angle": "rad", "dimensionless": "1",
}


class UnknownUnitError(InputError):
    """A unit name that bodycensus does not know."""


def _squash(text: str) -> str:
    return re.sub(r"[\s.\-]", "", text.strip()).lower()


def find_unit(name: str) -> Unit | None:
    """The unit called ``name`` (any common spelling), or None when it is not a unit we know."""
    if name in UNITS:
        return UNITS[name]
    squashed = _squash(name)
    for candidate in (squashed, squashed.replace("_", "")):
        if candidate in _ALIASES:
            return UNITS[_ALIASES[candidate]]
        for unit in _UNITS:
            if unit.name.lower() == candidate:
                return unit
    return None


def parse_unit(name: str) -> Unit:
    """The unit called ``name``; raises UnknownUnitError listing the known names otherwise."""
    unit = find_unit(name)
    if unit is None:
        known = ", ".join(u.name for u in _UNITS)
        raise UnknownUnitError(f"unknown unit '{name}'; use one of: {known}")
    return unit


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """Convert a scalar between two units of the same dimension."""
    source, target = parse_unit(from_unit), parse_unit(to_unit)
    if source.relative or target.relative:
        raise UnknownUnitError(f"'{source.name if source.relative else target.name}' is "
                               "relative to a radius in the catalogue; it has no fixed factor")
    if source.dimension != target.dimension:
        raise UnknownUnitError(f"cannot convert {source.dimension} to {target.dimension}")
    return value * source.to_si / target.to_si
