"""Tests for bodycensus.input.schema: header aliases, unit hints, overrides and their error
messages."""

from __future__ import annotations

import polars as pl
import pytest
from astropy import constants as const
from astropy import units as u

from bodycensus.input.schema import (
    CANONICAL_FIELDS,
    FIELD_TYPES,
    NUMERIC_FIELDS,
    SchemaError,
    describe_columns,
    guess_mapping,
    parse_assignment,
    read_header,
)


def test_canonical_fields_and_types_follow_the_contract() -> None:
    # DEVELOPERS.md "Normalised table": the field list and dtypes, in this order.
    assert CANONICAL_FIELDS == (
        "id", "name", "label", "family", "parent", "system", "mass", "radius", "semi_major_axis",
        "eccentricity", "period", "rotation_period", "tidally_locked", "age", "temperature",
        "luminosity", "inclination", "retrograde", "ring_inner", "ring_outer", "ring_mass",
        "ring_density", "mass_error", "mass_error_low", "radius_error", "radius_error_low",
        "semi_major_axis_error", "semi_major_axis_error_low", "period_error", "period_error_low",
    )
    assert {f for f, t in FIELD_TYPES.items() if t == pl.String} == {
        "id", "name", "label", "family", "parent", "system"}
    assert {f for f, t in FIELD_TYPES.items() if t == pl.Boolean} == {"tidally_locked",
                                                                      "retrograde"}
    assert set(NUMERIC_FIELDS) == {f for f, t in FIELD_TYPES.items() if t == pl.Float64}
    assert len(NUMERIC_FIELDS) == 22


@pytest.mark.parametrize(("header", "field"), [
    ("ID", "id"), ("Body ID", "id"), ("objid", "id"), ("uid", "id"),
    ("Designation", "name"), ("body_type", "label"), ("Class", "label"), ("kind", "label"),
    ("family", "family"), ("Parent-ID", "parent"), ("host", "parent"), ("central body", "parent"),
    ("star_system", "system"), ("M", "mass"), ("r", "radius"), ("Rad", "radius"),
    ("A", "semi_major_axis"), ("Semi-major axis", "semi_major_axis"), ("SMA", "semi_major_axis"),
    ("orbital radius", "semi_major_axis"), ("distance", "semi_major_axis"),
    ("e", "eccentricity"), ("Ecc.", "eccentricity"), ("Orbital Period", "period"),
    ("year_length", "period"), ("P", "period"), ("day_length", "rotation_period"),
    ("Spin period", "rotation_period"), ("Tidal lock", "tidally_locked"),
    ("locked", "tidally_locked"), ("AGE", "age"), ("Teff", "temperature"),
    ("T_eq", "temperature"), ("surface_temperature", "temperature"), ("lum", "luminosity"),
    ("Orbit sense", "retrograde"), ("retrograde", "retrograde"), ("Inner edge", "ring_inner"),
    ("ring_outer_radius", "ring_outer"), ("material_density", "ring_density"),
])
def test_aliases_ignore_case_spaces_and_punctuation(header: str, field: str) -> None:
    assert read_header(header) == (field, None)


@pytest.mark.parametrize(("header", "field", "unit"), [
    ("radius_km", "radius", "km"),
    ("mass [earth_mass]", "mass", "earth_mass"),
    ("a (au)", "semi_major_axis", "au"),
    ("a (AU)", "semi_major_axis", "au"),
    ("a_au", "semi_major_axis", "au"),
    ("Mass (M_jup)", "mass", "jupiter_mass"),
    ("period_days", "period", "d"),
    ("age_gyr", "age", "Gyr"),
    ("temp_k", "temperature", "K"),
    ("luminosity (L_sun)", "luminosity", "solar_luminosity"),
    ("mass_earth", "mass", "earth_mass"),
    ("radius_earth", "radius", "earth_radius"),
    ("mass_jup", "mass", "jupiter_mass"),
    ("mass_jupiter", "mass", "jupiter_mass"),
    ("radius_sun", "radius", "solar_radius"),
    ("rotation_h", "rotation_period", "h"),
    ("mass_kg", "mass", "kg"),
    ("radius_jupiter_radii", "radius", "jupiter_radius"),
    ("Period (a)", "period", "yr"),
    ("ring_inner_km", "ring_inner", "km"),
    ("ring outer [R_planet]", "ring_outer", "planet_radius"),
    ("outer_radius (Rp)", "ring_outer", "planet_radius"),
    ("ring density (g/cm3)", "ring_density", "g/cm3"),
    ("ring_mass_kg", "ring_mass", "kg"),
    ("i (deg)", "inclination", "deg"),
    ("inclination_rad", "inclination", "rad"),
])
def test_unit_hints_in_headers(header: str, field: str, unit: str) -> None:
    name, hint = read_header(header)
    assert (name, hint.name if hint else None) == (field, unit)


@pytest.mark.parametrize("header", ["host_mass", "colour", "x", "orbit", "mass_duplicated_0"])
def test_headers_that_name_no_field(header: str) -> None:
    assert read_header(header) == (None, None)


def test_a_hint_of_the_wrong_dimension_is_not_taken_as_the_unit() -> None:
    # 'kg' is a unit, but not a length: the field is still radius, with no unit from the header.
    assert read_header("radius (kg)") == ("radius", None)
    assert read_header("radius_kg") == (None, None)


def test_guess_mapping_marks_defaults_as_ambiguous() -> None:
    mapping = guess_mapping(["id", "mass", "radius_km", "e", "age", "name", "colour"])
    mass, radius = mapping.choices["mass"], mapping.choices["radius"]
    assert (mass.unit, mass.unit_source, mass.ambiguous) == ("kg", "default", True)
    assert (radius.unit, radius.unit_source, radius.ambiguous) == ("km", "header", False)
    assert mapping.choices["age"].unit == "years" and mapping.choices["age"].ambiguous
    assert not mapping.choices["eccentricity"].ambiguous  # dimensionless: nothing to guess
    assert mapping.choices["name"].unit is None and not mapping.choices["name"].ambiguous
    assert mapping.unknown_columns == ["colour"]
    assert "period" in mapping.missing_fields and "mass" not in mapping.missing_fields


def test_factors_agree_with_astropy() -> None:
    # Reference values: astropy.units / astropy.constants (IAU 2015 B3 nominal masses and radii;
    # IAU 2012 B2 au; Julian year).
    mapping = guess_mapping(["id", "Mass (M_jup)", "radius_earth", "a (AU)", "period_days",
                             "rotation_h", "age_gyr", "luminosity (L_sun)"])
    factors = {f: c.factor() for f, c in mapping.choices.items()}
    assert factors["mass"] == pytest.approx(const.M_jup.to_value(u.kg), rel=1e-9)
    assert factors["radius"] == pytest.approx(const.R_earth.to_value(u.m), rel=1e-12)
    assert factors["semi_major_axis"] == pytest.approx(u.au.to(u.m), rel=1e-15)
    assert factors["period"] == pytest.approx(u.day.to(u.s), rel=1e-15)
    assert factors["rotation_period"] == pytest.approx(u.hour.to(u.s), rel=1e-15)
    assert factors["age"] == pytest.approx(u.Gyr.to(u.yr), rel=1e-15)
    assert factors["luminosity"] == pytest.approx(const.L_sun.to_value(u.W), rel=1e-12)


def test_ages_in_time_units_and_periods_in_age_units_convert() -> None:
    # Julian year = 365.25 d (IAU); astropy's u.yr is the Julian year.
    mapping = guess_mapping(["id", "age_yr", "period (Myr)"])
    assert mapping.choices["age"].factor() == pytest.approx(1.0)
    assert mapping.choices["period"].factor() == pytest.approx(u.Myr.to(u.s), rel=1e-12)


def test_first_of_two_matching_columns_wins_and_the_other_is_reported() -> None:
    mapping = guess_mapping(["id", "radius_km", "radius", "r"])
    assert mapping.choices["radius"].column == "radius_km"
    assert mapping.unknown_columns == ["radius", "r"]
    assert mapping.conflicts == {"radius": ["radius", "r"]}
    assert mapping.to_json()["conflicts"] == {"radius": ["radius", "r"]}


def test_map_override_takes_a_column_from_its_guessed_field() -> None:
    mapping = guess_mapping(["id", "dist_au", "host", "star"], map_overrides={
        "semi_major_axis": "dist_au", "parent": "star"})
    sma = mapping.choices["semi_major_axis"]
    # The override names the column; its header still hints at the unit.
    assert (sma.column, sma.unit, sma.unit_source) == ("dist_au", "au", "header")
    assert mapping.choices["parent"].column == "star"
    assert mapping.unknown_columns == ["host"]


def test_map_override_moves_a_column_between_fields() -> None:
    mapping = guess_mapping(["id", "name", "label"], map_overrides={"id": "name"})
    assert mapping.choices["id"].column == "name"
    assert "name" not in mapping.choices
    assert mapping.unknown_columns == ["id"]


def test_unit_override_beats_the_header_hint() -> None:
    mapping = guess_mapping(["id", "radius_km"], unit_overrides={"radius": "R_earth"})
    radius = mapping.choices["radius"]
    assert (radius.unit, radius.unit_source) == ("earth_radius", "override")
    assert radius.ambiguous is False


def test_mapping_to_json_is_plain() -> None:
    mapping = guess_mapping(["id", "mass_earth"])
    assert mapping.to_json()["choices"]["mass"] == {
        "field": "mass", "column": "mass_earth", "unit": "earth_mass", "unit_source": "header",
        "ambiguous": False}


def test_parse_assignment() -> None:
    assert parse_assignment("radius=radius (km)") == ("radius", "radius (km)")
    assert parse_assignment(" Mass = M_jup ") == ("mass", "M_jup")


@pytest.mark.parametrize("text", ["radius", "=x", "radius="])
def test_parse_assignment_needs_field_equals_value(text: str) -> None:
    with pytest.raises(SchemaError, match="field=value"):
        parse_assignment(text)


def test_unknown_field_lists_the_fields() -> None:
    with pytest.raises(SchemaError, match="unknown field 'density'.*semi_major_axis"):
        parse_assignment("density=rho")
    with pytest.raises(SchemaError, match="unknown field 'sizes'.*luminosity"):
        guess_mapping(["id"], map_overrides={"sizes": "id"})


def test_unknown_unit_lists_the_units() -> None:
    with pytest.raises(SchemaError, match="unknown unit 'furlong'.*earth_radius.*au"):
        guess_mapping(["id", "radius"], unit_overrides={"radius": "furlong"})


def test_unit_of_the_wrong_dimension_says_what_fits() -> None:
    with pytest.raises(SchemaError, match=r"'kg' measures mass, but radius needs one of: m, km"):
        guess_mapping(["id", "radius"], unit_overrides={"radius": "kg"})
    with pytest.raises(SchemaError, match="field 'name' has no unit"):
        guess_mapping(["id", "name"], unit_overrides={"name": "km"})


def test_the_planet_radius_unit_fits_only_ring_edges() -> None:
    # Radii of the ring's planet mean nothing for a planet's own radius or an orbit.
    assert read_header("radius (R_planet)") == ("radius", None)
    with pytest.raises(SchemaError, match="only ring_inner, ring_outer can be given in it"):
        guess_mapping(["id", "a"], unit_overrides={"semi_major_axis": "R_planet"})
    mapping = guess_mapping(["id", "ring outer [R_planet]", "ring_inner_km"])
    assert mapping.choices["ring_outer"].relative and not mapping.choices["ring_inner"].relative
    assert mapping.choices["ring_outer"].factor() == 1.0  # numbers kept; derive multiplies


def test_map_to_a_missing_column_lists_the_columns() -> None:
    with pytest.raises(SchemaError, match=r"no column 'Mass' in the file; its columns are "
                                          r"'id', 'mass_kg'"):
        guess_mapping(["id", "mass_kg"], map_overrides={"mass": "Mass"})


def test_describe_columns_shortens_long_lists() -> None:
    assert describe_columns([]) == "(no columns)"
    assert describe_columns(["a", "b" * 50]) == "'a', '" + "b" * 37 + "...'"
    assert describe_columns([str(i) for i in range(25)], most=3) == "'0', '1', '2' and 22 more"
