"""The units a curator reads (science/display_units.py): each quantity's unit by family or size,
conversions against astropy, the polars form equal to the Python form, and messages said again
in another unit.

Oracle: astropy.units (IAU 2015 B3 nominal masses and radii, the IAU au, the Julian year).
"""

from __future__ import annotations

import astropy.units as u
import polars as pl
import pytest

from bodycensus.science import display_units as du
from bodycensus.science.display_units import FAMILY_UNITS, SI_UNITS, DisplayChoice
from bodycensus.science.families import FAMILIES
from bodycensus.science.units import AU, M_EARTH, M_JUPITER, M_SUN, R_EARTH

ASTROPY = {"earth_mass": u.M_earth, "jupiter_mass": u.M_jup, "solar_mass": u.M_sun,
           "earth_radius": u.R_earth, "jupiter_radius": u.R_jup, "solar_radius": u.R_sun,
           "au": u.au, "km": u.km, "d": u.day, "h": u.hour, "yr": u.yr, "g/cm3": u.g / u.cm**3,
           "km/s": u.km / u.s, "solar_luminosity": u.L_sun}


@pytest.mark.parametrize("unit", sorted(ASTROPY))
def test_each_display_unit_converts_as_astropy_does(unit: str) -> None:
    si = ASTROPY[unit].si.scale if unit != "yr" else (1 * u.yr).to(u.s).value
    assert du.to_unit(si, unit) == pytest.approx(1.0, rel=1e-9)


@pytest.mark.parametrize("family, unit", [
    ("rock", "earth_mass"), ("ice", "earth_mass"), ("ice_giant", "earth_mass"),
    ("gas_giant", "jupiter_mass"), ("brown_dwarf", "jupiter_mass"), ("star", "solar_mass"),
    ("white_dwarf", "solar_mass"), ("neutron_star", "solar_mass"), ("minor", "kg")])
def test_a_mass_is_shown_in_its_familys_unit(family: str, unit: str) -> None:
    assert FAMILY_UNITS.unit("mass", family, 1e20) == unit


def test_without_a_family_the_size_chooses() -> None:
    # an unknown family: Earth masses for an Earth, Jupiter masses for a Jupiter, solar above
    assert [FAMILY_UNITS.unit("mass", "unknown", m) for m in (M_EARTH, M_JUPITER, M_SUN)] == [
        "earth_mass", "jupiter_mass", "solar_mass"]
    # an orbit: the Moon's 384,400 km (JPL) in km, Mercury's 0.387 au in au
    assert FAMILY_UNITS.unit("distance", "rock", 3.844e8) == "km"
    assert FAMILY_UNITS.unit("distance", "rock", 0.387 * AU) == "au"


def test_si_and_pinned_units_override_the_family() -> None:
    assert SI_UNITS.unit("mass", "gas_giant", M_JUPITER) == "kg"
    assert SI_UNITS.unit("age", "rock", 4.6e9) == "years"  # ages are kept in years
    pinned = DisplayChoice(fixed={"mass": "jupiter_mass"})
    assert pinned.unit("mass", "star", M_SUN) == "jupiter_mass"
    assert pinned.unit("radius", "star", 7e8) == "solar_radius"  # other dimensions keep theirs


def test_the_polars_form_chooses_as_the_python_form_does() -> None:
    cases = [(q, f, s) for q in ("mass", "radius", "distance", "period", "age", "density")
             for f in FAMILIES for s in (1.0, 3e5, 6.4e6, 2e7, 7e7, 1e9, 2e11, 6e24, 2e27, 2e30)]
    frame = pl.DataFrame({"family": [c[1] for c in cases], "size": [c[2] for c in cases]},
                         schema={"family": pl.String, "size": pl.Float64})
    by_quantity: dict[str, list[str]] = {}
    for quantity in {c[0] for c in cases}:
        column = frame.with_columns(unit=du.unit_expr(quantity, pl.col("family"),
                                                      pl.col("size")))["unit"]
        by_quantity[quantity] = column.to_list()
    for i, (quantity, family, size) in enumerate(cases):
        assert by_quantity[quantity][i] == FAMILY_UNITS.unit(quantity, family, size), (
            quantity, family, size)


def test_scaled_expr_gives_the_number_and_its_symbol() -> None:
    frame = pl.DataFrame({"v": [R_EARTH, 3.0 * AU], "unit": ["earth_radius", "au"]})
    out = frame.select(*du.scaled_expr(pl.col("v"), pl.col("unit")))
    assert out[:, 0].to_list() == pytest.approx([1.0, 3.0], rel=1e-12)
    assert out[:, 1].to_list() == ["R_earth", "au"]


def test_a_message_is_said_again_in_the_chosen_units() -> None:
    message = "periapsis 1213 km is inside the rigid Roche limit 3323 km"
    assert du.resay(message, FAMILY_UNITS) == message  # the engine wrote family units
    assert du.resay(message, SI_UNITS) == ("periapsis 1.213e6 m is inside the rigid Roche "
                                           "limit 3.323e6 m")
    pinned = DisplayChoice(fixed={"length": "au"})
    said = du.resay("density 5.5 g/cm3; mass 1.2 M_jup at 0.05 au", pinned)
    assert said == "density 5.5 g/cm3; mass 1.2 M_jup at 0.05 au"  # mass and density kept
    in_kg = du.resay("mass 2.5 M_sun is above the limit 2.3 M_sun", SI_UNITS)
    assert in_kg == f"mass {du.short(2.5 * M_SUN)} kg is above the limit {du.short(2.3 * M_SUN)} kg"


def test_numbers_in_words_and_words_that_look_like_units_stay() -> None:
    assert du.resay("inner sibling 'b 3 d' reaches 2 au", SI_UNITS) == \
        f"inner sibling 'b 3 d' reaches {du.short(2 * AU)} m"
    assert du.resay("mass looks 317.8x too large", SI_UNITS) == "mass looks 317.8x too large"
