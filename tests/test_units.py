"""Reference tests for units.py: constants and unit factors against astropy, spellings, errors.

Oracle: astropy.constants (CODATA 2022 + IAU 2015 Resolution B3) and astropy.units.
CODATA 2022 G equals CODATA 2018 G, so masses derived as GM/G agree to rounding.
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import pytest

from bodycensus.science import units
from bodycensus.science.units import UnknownUnitError, convert, find_unit, parse_unit

# Constants defined exactly (IAU/SI definitions): equal to the last bit.
EXACT_CONSTANTS = [
    (units.AU, const.au),  # IAU 2012 Resolution B2
    (units.R_SUN, const.R_sun),  # IAU 2015 B3 nominal
    (units.R_EARTH, const.R_earth),  # IAU 2015 B3 nominal, equatorial (astropy's too)
    (units.R_JUPITER, const.R_jup),  # IAU 2015 B3 nominal, equatorial (astropy's too)
    (units.L_SUN, const.L_sun),  # IAU 2015 B3 nominal
    (units.GM_SUN, const.GM_sun),  # IAU 2015 B3 nominal
    (units.GM_EARTH, const.GM_earth),  # IAU 2015 B3 nominal
    (units.GM_JUPITER, const.GM_jup),  # IAU 2015 B3 nominal
    (units.G, const.G),  # CODATA 2018 = CODATA 2022
    (units.G0, const.g0),  # standard gravity, CGPM 1901
    (units.SPEED_OF_LIGHT, const.c),  # SI definition
]

# Masses are GM / G, computed the same way in astropy: equal to rounding.
DERIVED_CONSTANTS = [
    (units.M_SUN, const.M_sun),
    (units.M_EARTH, const.M_earth),
    (units.M_JUPITER, const.M_jup),
]


@pytest.mark.parametrize(("ours", "reference"), EXACT_CONSTANTS)
def test_defined_constants_equal_astropy(ours: float, reference: const.Constant) -> None:
    assert ours == reference.si.value


@pytest.mark.parametrize(("ours", "reference"), DERIVED_CONSTANTS)
def test_masses_match_astropy(ours: float, reference: const.Constant) -> None:
    assert ours == pytest.approx(reference.si.value, rel=1e-12)


def test_year_is_julian() -> None:
    # IAU: the Julian year is exactly 365.25 d of 86,400 s; astropy's `yr` is the same year.
    assert units.YEAR == 365.25 * 86_400.0
    assert units.YEAR == u.yr.to(u.s)


# Every unit we know, with its astropy twin and the SI unit of its dimension (ages are in years).
ASTROPY_UNITS: dict[str, u.UnitBase] = {
    "kg": u.kg, "g": u.g, "earth_mass": u.M_earth, "jupiter_mass": u.M_jup,
    "solar_mass": u.M_sun,
    "m": u.m, "km": u.km, "earth_radius": u.R_earth, "jupiter_radius": u.R_jup,
    "solar_radius": u.R_sun, "au": u.au,
    "s": u.s, "h": u.h, "d": u.d, "yr": u.yr,
    "kg/m3": u.kg / u.m**3, "g/cm3": u.g / u.cm**3,
    "K": u.K, "W": u.W, "solar_luminosity": u.L_sun,
    "years": u.yr, "Myr": u.Myr, "Gyr": u.Gyr,
    "deg": u.deg, "rad": u.rad,
    "1": u.dimensionless_unscaled,
}
ASTROPY_SI: dict[str, u.UnitBase] = {
    "mass": u.kg, "length": u.m, "time": u.s, "density": u.kg / u.m**3, "temperature": u.K,
    "power": u.W, "age": u.yr, "angle": u.rad, "dimensionless": u.dimensionless_unscaled,
}
FIXED_UNITS = sorted(name for name, unit in units.UNITS.items() if not unit.relative)


def test_every_unit_has_an_astropy_check() -> None:
    # A unit added to units.py without an entry here would go unchecked (DEVELOPERS.md); a
    # relative unit has no fixed factor to check (below).
    assert set(ASTROPY_UNITS) == set(FIXED_UNITS)


def test_the_planet_radius_is_a_relative_length_without_a_fixed_factor() -> None:
    unit = parse_unit("R_planet")
    assert (unit.name, unit.dimension, unit.relative) == ("planet_radius", "length", True)
    assert {parse_unit(s).name for s in ("Rp", "planet radii", "R_pl")} == {"planet_radius"}
    with pytest.raises(UnknownUnitError, match="relative to a radius in the catalogue"):
        convert(2.0, "planet_radius", "km")


@pytest.mark.parametrize("name", FIXED_UNITS)
def test_unit_factor_matches_astropy(name: str) -> None:
    unit = units.UNITS[name]
    expected = ASTROPY_UNITS[name].to(ASTROPY_SI[unit.dimension])
    assert unit.to_si == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("dimension", sorted(units.SI_UNIT))
def test_si_unit_of_each_dimension_has_factor_one(dimension: str) -> None:
    unit = parse_unit(units.SI_UNIT[dimension])
    assert (unit.dimension, unit.to_si) == (dimension, 1.0)


def test_every_field_dimension_has_an_si_unit() -> None:
    assert set(units.FIELD_DIMENSIONS.values()) <= set(units.SI_UNIT)


@pytest.mark.parametrize(
    ("spelling", "name"),
    [
        ("M_jup", "jupiter_mass"), ("Mjup", "jupiter_mass"), ("M_earth", "earth_mass"),
        ("M⊕", "earth_mass"), ("solar masses", "solar_mass"), ("Msun", "solar_mass"),
        ("R_earth", "earth_radius"), ("R_jup", "jupiter_radius"), ("R_sun", "solar_radius"),
        ("AU", "au"), ("km", "km"), (" km ", "km"), ("kilometres", "km"),
        ("g/cm^3", "g/cm3"), ("g/cc", "g/cm3"), ("kg/m^3", "kg/m3"),
        ("days", "d"), ("Day", "d"), ("hours", "h"), ("yr", "yr"),
        ("L_sun", "solar_luminosity"), ("Gyr", "Gyr"), ("myr", "Myr"),
        ("degrees", "deg"), ("°", "deg"), ("radians", "rad"),
    ],
)
def test_spellings(spelling: str, name: str) -> None:
    assert parse_unit(spelling).name == name
    assert find_unit(spelling) is units.UNITS[name]


def test_unknown_unit_is_none_for_find_and_a_clear_error_for_parse() -> None:
    assert find_unit("furlong") is None
    with pytest.raises(UnknownUnitError) as caught:
        parse_unit("furlong")
    message = str(caught.value)
    assert isinstance(caught.value, ValueError)
    assert "\n" not in message
    assert message.startswith("unknown unit 'furlong'; use one of: kg, g, earth_mass")
    assert all(name in message for name in units.UNITS)


def test_convert_matches_astropy() -> None:
    assert convert(1.0, "au", "km") == pytest.approx(u.au.to(u.km), rel=1e-15)
    in_jupiter_masses = u.M_sun.to(u.M_jup)
    assert convert(1.0, "solar_mass", "jupiter_mass") == pytest.approx(in_jupiter_masses, rel=1e-12)
    assert convert(5.514, "g/cm3", "kg/m3") == pytest.approx(5514.0, rel=1e-15)
    assert convert(1.0, "yr", "d") == pytest.approx(u.yr.to(u.d), rel=1e-15)


def test_convert_refuses_mixed_dimensions() -> None:
    with pytest.raises(UnknownUnitError, match="cannot convert mass to length"):
        convert(1.0, "kg", "m")
