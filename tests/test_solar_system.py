"""The Solar System fixture itself: the normalised-table contract and internal consistency."""

from __future__ import annotations

import polars as pl
import pytest
from solar_system import SOLAR_SYSTEM_ROWS, solar_system_frame

from bodycensus.input.schema import CANONICAL_FIELDS, FIELD_TYPES
from bodycensus.science.families import FAMILIES
from bodycensus.science.physics.bodies import bulk_density
from bodycensus.science.physics.orbits import kepler_period
from bodycensus.science.units import PLANET_RADII

BY_ID = {row["id"]: row for row in SOLAR_SYSTEM_ROWS}


def test_frame_has_the_normalised_table_schema() -> None:
    # DEVELOPERS.md, "Normalised table": canonical fields in SI, then _row (i64), _bad (str) and
    # _planet_radii (str).
    frame = solar_system_frame()
    expected = {**{f: FIELD_TYPES[f] for f in CANONICAL_FIELDS}, "_row": pl.Int64,
                "_bad": pl.String, PLANET_RADII: pl.String}
    assert frame.schema == pl.Schema(expected)
    assert frame["_row"].to_list() == list(range(1, len(SOLAR_SYSTEM_ROWS) + 1))
    assert frame["_bad"].null_count() == frame.height


def test_ids_unique_parents_known_families_ours() -> None:
    assert len(BY_ID) == len(SOLAR_SYSTEM_ROWS) == 27
    assert all(row["parent"] is None or row["parent"] in BY_ID for row in SOLAR_SYSTEM_ROWS)
    assert all(row["family"] in FAMILIES for row in SOLAR_SYSTEM_ROWS)


@pytest.mark.parametrize("body", [r["id"] for r in SOLAR_SYSTEM_ROWS
                                  if r["parent"] and r["family"] != "ring"])
def test_listed_periods_agree_with_kepler(body: str) -> None:
    # A typing check: each listed period against Kepler's third law from the listed a and
    # masses. 1 % covers mean-distance and oblateness effects (REFERENCES.md: Moon 0.14 %).
    row = BY_ID[body]
    parent = BY_ID[row["parent"]]
    period = kepler_period(row["semi_major_axis"], parent["mass"], row["mass"])
    assert period == pytest.approx(row["period"], rel=1e-2)


@pytest.mark.parametrize(("body", "density"), [
    ("earth", 5514), ("moon", 3344), ("jupiter", 1326), ("titan", 1881), ("pluto", 1854),
    ("pan", 420), ("atlas", 500), ("prometheus", 480),
])
def test_densities_match_references(body: str, density: float) -> None:
    # JPL SSD and NSSDCA Saturnian satellite fact sheet densities (REFERENCES.md).
    row = BY_ID[body]
    assert bulk_density(row["mass"], row["radius"]) == pytest.approx(density, rel=1e-3)
