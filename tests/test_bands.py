"""Family density bands: one arithmetic for the rules' table expression and for one mass (the
density diagram's shaded band); the composition curves they use; and the unit slips that would
explain a density far outside one."""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import polars as pl
import pytest

from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.physics import bodies
from bodycensus.science.rules.bands import (
    UNIT_SLIPS,
    band_columns,
    band_density,
    curve_density,
    slip_factor,
    unit_slip_hint,
    with_bands,
)
from bodycensus.science.units import M_EARTH, M_JUPITER, M_SUN

# Earth: NASA Earth fact sheet (REFERENCES.md): 5.9722e24 kg, mean radius 6371.0 km.
EARTH_MASS, EARTH_RADIUS = 5.9722e24, 6.371e6


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


@pytest.mark.parametrize(("curve", "formula"), [
    ("iron", lambda m: bodies.composition_density(m, "iron")),
    ("rock", lambda m: bodies.composition_density(m, "rock")),
    ("water_ice", lambda m: bodies.composition_density(m, "water_ice")),
    ("cold_hhe", bodies.cold_hhe_density), ("white_dwarf", bodies.white_dwarf_density),
    ("main_sequence", bodies.main_sequence_density),
])
def test_each_curve_is_the_physics_formula(curve: str, formula: Callable[..., Any]) -> None:
    for mass in (0.5 * M_EARTH, 2.0 * M_JUPITER, 0.6 * M_SUN):
        assert curve_density(curve, mass) == formula(mass)
    frame = pl.DataFrame({"m": [M_EARTH, M_JUPITER]})
    column = frame.select(curve_density(curve, pl.col("m")))[:, 0].to_list()
    assert column == pytest.approx([formula(M_EARTH), formula(M_JUPITER)], rel=1e-12)


def test_an_unknown_curve_is_refused() -> None:
    with pytest.raises(KeyError):
        curve_density("granite", M_EARTH)


def _bands(rows: list[tuple[str, float]]) -> list[tuple[float | None, float | None]]:
    frame = pl.DataFrame(rows, schema=["family", "_mass"], orient="row").select(band_columns())
    return list(zip(frame["_band_low"].to_list(), frame["_band_high"].to_list(), strict=True))


def test_families_without_a_band_or_past_a_curve_have_none() -> None:
    # black_hole and unknown have no band; a white dwarf above the Nauenberg (1972) mass has
    # zero radius on the curve, so an infinite density: no band rather than a wrong one
    assert _bands([("black_hole", 10 * M_SUN), ("unknown", M_EARTH), ("no-such", M_EARTH),
                   ("white_dwarf", 2.0 * M_SUN)]) == [(None, None)] * 4


def _hints(densities: list[float], family: str = "rock", mass: float = EARTH_MASS
           ) -> list[str | None]:
    frame = pl.DataFrame({"family": family, "_mass": mass, "density": densities})
    out = frame.with_columns(band_columns()).select(unit_slip_hint(pl.col("density")))
    return out[:, 0].to_list()


def test_radius_in_km_read_as_metres_is_named() -> None:
    """Earth's radius given as 6371 where metres were expected: density 1e9 x too high."""
    slipped = bodies.bulk_density(EARTH_MASS, EARTH_RADIUS / 1e3)
    assert _hints([slipped]) == ["radius looks 1000x too small (values in km read as metres?)"]


def test_earth_masses_read_as_jupiter_masses_is_named() -> None:
    """A rocky world's mass column in Earth masses, read as Jupiter masses: its mass comes out
    M_jup / M_earth = 317.8x too large (IAU 2015 B3 nominal GM ratio)."""
    slipped = bodies.bulk_density(EARTH_MASS * M_JUPITER / M_EARTH, EARTH_RADIUS)
    [hint] = _hints([slipped])
    assert hint == "mass looks 317.8x too large (values in Earth masses read as Jupiter masses?)"


def test_a_value_too_small_is_said_too_small_not_a_fraction_too_large() -> None:
    """Jupiter masses read as Earth masses: 318x too small, never '0.003146x too large'."""
    slipped = bodies.bulk_density(EARTH_MASS * M_EARTH / M_JUPITER, EARTH_RADIUS)
    [hint] = _hints([slipped])
    assert hint == "mass looks 317.8x too small (values in Jupiter masses read as Earth masses?)"


def test_no_hint_inside_the_band_or_when_no_factor_explains_the_miss() -> None:
    inside = bodies.bulk_density(EARTH_MASS, EARTH_RADIUS)
    # off by 1e7: no known factor (or cube of one) brings it back into the band
    assert _hints([inside, inside * 1e7, inside / 1e7]) == [None, None, None]
    # a family without a band gives no hint at all
    assert _hints([inside * 1e9], family="black_hole") == [None]


def test_every_slip_factor_is_a_ratio_of_known_units() -> None:
    for field, given, read_as in UNIT_SLIPS:
        factor = slip_factor(given, read_as)
        assert field in ("mass", "radius") and math.isfinite(factor) and factor > 0, given
    factors = {(f, round(math.log10(slip_factor(g, r)), 6)) for f, g, r in UNIT_SLIPS}
    assert len(factors) == len(UNIT_SLIPS)  # no slip listed twice
    # each slip comes with its inverse
    assert all((f, -k) in factors for f, k in factors)


def test_bands_from_curves_computed_once_equal_the_bands_of_each_family() -> None:
    # with_bands (the label statistics' pass) must give the very numbers band_columns gives
    # (the rules' derive): every family, masses from a pebble to beyond the curves' validity
    masses = [1e3, 1e18, 0.1 * M_EARTH, M_EARTH, 10 * M_EARTH, M_JUPITER, 60 * M_JUPITER,
              0.5 * M_SUN, M_SUN, 3 * M_SUN, 1e40, None]
    table = pl.LazyFrame({"family": [f for f in FAMILY_PARAMETERS for _ in masses],
                          "_mass": [m for _ in FAMILY_PARAMETERS for m in masses]},
                         schema={"family": pl.String, "_mass": pl.Float64})
    expected = table.with_columns(band_columns()).collect()
    assert with_bands(table).collect().equals(expected)
    assert expected["_band_high"].is_not_null().sum() > len(FAMILY_PARAMETERS)
