"""Family density bands: one arithmetic for the rules' table expression and for one mass (the
density diagram's shaded band)."""

from __future__ import annotations

import polars as pl
import pytest

from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.rules.bands import band_columns, band_density
from bodycensus.science.units import M_EARTH, M_SUN


def test_rock_band_at_earth_mass_holds_the_earth() -> None:
    # Earth's bulk density 5514 kg m-3 (NASA NSSDCA Earth fact sheet) lies in the rock band.
    low, high = band_density(FAMILY_PARAMETERS["rock"].density_band, M_EARTH)
    assert low < 5514 < high
    # and a pure-iron Earth-mass body (~1.3e4 kg m-3 from Seager et al. 2007) at its top edge
    assert 1.0e4 < high < 1.6e4


def test_band_needs_a_mass_unless_constant() -> None:
    assert band_density(FAMILY_PARAMETERS["rock"].density_band, None) is None
    assert band_density(FAMILY_PARAMETERS["neutron_star"].density_band, None) == (1e16, 3e18)


def test_no_band_where_the_curve_is_past_its_validity() -> None:
    # Nauenberg 1972's white-dwarf radius vanishes at 1.454 M_sun: no density band beyond it
    # (this once divided by zero and failed the whole ingest of a small catalogue).
    band = FAMILY_PARAMETERS["white_dwarf"].density_band
    assert band_density(band, 1.6 * M_SUN) is None
    low, high = band_density(band, 0.6 * M_SUN)
    assert 0 < low < high


@pytest.mark.parametrize("family, mass", [("rock", M_EARTH), ("gas_giant", 300 * M_EARTH),
                                          ("white_dwarf", 0.6 * M_SUN), ("star", M_SUN),
                                          ("neutron_star", 1.4 * M_SUN)])
def test_one_mass_and_the_table_agree(family: str, mass: float) -> None:
    # The scalar band of one mass is the table's band of a body of that mass and family.
    table = pl.DataFrame({"family": [family], "_mass": [mass]}).select(band_columns())
    expected = band_density(FAMILY_PARAMETERS[family].density_band, mass)
    assert expected is not None
    assert (table["_band_low"][0], table["_band_high"][0]) == pytest.approx(expected)
