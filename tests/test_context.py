"""The derived-column context every rule reads, checked on the Solar System against published
values (REFERENCES.md) and on tiny literal tables for the guards (non-positive input, bad
eccentricity, duplicate ids, loops, the inner sibling)."""

from __future__ import annotations

from typing import Any

import pytest
from catalogue_builder import normalised
from solar_system import solar_system_frame

from bodycensus.science.rules.context import (
    DERIVED_COLUMNS,
    ENGINE_COLUMNS,
    context_facts,
    derive,
)
from bodycensus.science.units import DAY, M_SUN

KM = 1e3


@pytest.fixture(scope="module")
def solar() -> dict[str, dict[str, Any]]:
    """The Solar System's derived context, row by id."""
    frame = derive(solar_system_frame().lazy()).collect()
    return {row["id"]: row for row in frame.iter_rows(named=True)}


def test_every_documented_column_is_derived(solar: dict[str, dict[str, Any]]) -> None:
    """DEVELOPERS.md lists the derived columns of bodies.parquet."""
    assert set(DERIVED_COLUMNS) | set(ENGINE_COLUMNS) <= set(solar["moon"])


def test_densities_of_the_earth_and_the_moon(solar: dict[str, dict[str, Any]]) -> None:
    """JPL SSD bulk densities (REFERENCES.md): Earth 5514, Moon 3344 kg m-3 (rel 1e-3)."""
    assert solar["earth"]["density"] == pytest.approx(5514.0, rel=1e-3)
    moon = solar["moon"]
    assert moon["density"] == pytest.approx(3344.0, rel=1e-3)
    assert moon["parent_density"] == pytest.approx(5514.0, rel=1e-3)
    assert moon["parent_family"] == "rock" and moon["parent_mass"] == solar["earth"]["mass"]


def test_the_moons_orbit(solar: dict[str, dict[str, Any]]) -> None:
    """Moon a 384,400 km, e 0.0549 (REFERENCES.md): perigee a(1 - e), apogee a(1 + e); the
    sidereal period 27.3217 d agrees with Kepler's third law to 2e-3 (the Sun perturbs it)."""
    moon = solar["moon"]
    assert moon["periapsis"] / KM == pytest.approx(384_400 * (1 - 0.0549), rel=1e-9)
    assert moon["apoapsis"] / KM == pytest.approx(384_400 * (1 + 0.0549), rel=1e-9)
    assert moon["kepler_period"] / DAY == pytest.approx(27.3217, rel=2e-3)
    assert moon["period_ratio"] == pytest.approx(1.0, rel=2e-3)


def test_the_moons_place_in_the_roche_plane_and_hill_sphere(
        solar: dict[str, dict[str, Any]]) -> None:
    """roche_x = (5514 / 3344)^(1/3); roche_y = perigee / Earth's radius; Earth's Hill sphere
    ~1.5 million km (REFERENCES.md), so the Moon's apogee is about a quarter of it."""
    moon = solar["moon"]
    assert moon["roche_x"] == pytest.approx((5514.0 / 3344.0) ** (1 / 3), rel=2e-3)
    assert moon["roche_y"] == pytest.approx(384_400 * (1 - 0.0549) / 6371.0084, rel=1e-6)
    assert moon["parent_hill_radius"] / KM == pytest.approx(1.5e6, rel=5e-2)
    assert moon["hill_ratio"] == pytest.approx(405_504 / 1.5e6, rel=5e-2)
    assert moon["grandparent"] == "sun" and moon["grandparent_mass"] == M_SUN


def test_earth_moon_barycentre_and_the_moons_despin_time(
        solar: dict[str, dict[str, Any]]) -> None:
    """Barycentre 4,671 km from Earth's centre; despinning ~2.4e7 yr for rock parameters
    (REFERENCES.md, Gladman et al. 1996; computed facts, rel 1e-2)."""
    moon = solar["moon"]
    assert moon["barycentre_offset"] / KM == pytest.approx(4_671, rel=1e-2)
    assert moon["tidal_lock_time"] == pytest.approx(2.4e7, rel=5e-2)


def test_inner_sibling_is_the_next_body_inward(solar: dict[str, dict[str, Any]]) -> None:
    assert solar["mars"]["inner_id"] == "earth" and solar["earth"]["inner_id"] == "venus"
    assert solar["mercury"]["inner_id"] is None
    assert solar["deimos"]["inner_id"] == "phobos"


def _derived(rows: list[dict[str, Any]]) -> dict[str, Any]:
    table = normalised(rows).lazy()
    frame = derive(table, context_facts(table)).collect()
    return {row["id"]: row for row in frame.iter_rows(named=True)}


STAR = {"id": "S", "label": "G2V", "family": "star", "mass": M_SUN, "radius": 6.957e8}


def test_non_positive_inputs_are_absent_and_bad_eccentricities_give_no_orbit() -> None:
    rows = _derived([STAR,
                     {"id": "neg", "parent": "S", "family": "rock", "mass": -1.0,
                      "radius": 6e6, "semi_major_axis": 1.5e11, "eccentricity": 0.1},
                     {"id": "hyper", "parent": "S", "family": "rock", "mass": 6e24,
                      "radius": 6e6, "semi_major_axis": 1.5e11, "eccentricity": 1.2},
                     {"id": "round", "parent": "S", "family": "rock", "mass": 6e24,
                      "radius": 6e6, "semi_major_axis": 1.5e11}])
    assert rows["neg"]["density"] is None and rows["neg"]["hill_radius"] is None
    assert rows["hyper"]["periapsis"] is None and rows["hyper"]["density"] is not None
    assert rows["round"]["periapsis"] == rows["round"]["apoapsis"] == 1.5e11  # no e: circular


def test_duplicates_loops_and_unit_slips_are_flagged_for_the_rules() -> None:
    slipped = {"id": "slip", "parent": "S", "family": "rock", "mass": 6e24, "radius": 6.4e3,
               "semi_major_axis": 1.5e11}  # radius in km where metres are expected
    rows = _derived([STAR, {**STAR, "id": "twin"}, {**STAR, "id": "twin"},
                     {"id": "a", "parent": "b"}, {"id": "b", "parent": "a"}, slipped])
    assert rows["twin"]["_id_count"] == 2 and rows["S"]["_id_count"] == 1
    assert rows["a"]["_in_cycle"] and not rows["S"]["_in_cycle"]
    assert rows["slip"]["_slip_hint"].startswith("radius looks 1000x too small")
    assert rows["slip"]["_trusted_density"] is None and rows["slip"]["roche_rigid"] is None
