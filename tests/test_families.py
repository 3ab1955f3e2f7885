"""Families: our physical families, the label -> family guess, overrides, per-family parameters.

The labels are invented catalogue wording (ours); the expected families are what each word means
in planetary science and astronomy.
"""

from __future__ import annotations

import pytest

from bodycensus.errors import InputError
from bodycensus.science.families import (
    FAMILIES,
    FAMILY_PARAMETERS,
    FLUID_FAMILIES,
    SOLID_FAMILIES,
    STELLAR_FAMILIES,
    FamilyMappingError,
    family_mapping,
    guess_family,
    parse_family_override,
)
from bodycensus.science.rules.bands import curve_density
from bodycensus.science.units import M_EARTH


def test_families_follow_the_vocabulary_of_the_design() -> None:
    assert FAMILIES == ("iron", "rock", "rock_ice", "ice", "ocean", "gas_giant", "ice_giant",
                        "brown_dwarf", "star", "giant_star", "white_dwarf", "neutron_star",
                        "black_hole", "minor", "ring", "unknown")
    assert SOLID_FAMILIES | FLUID_FAMILIES | STELLAR_FAMILIES <= set(FAMILIES)
    assert not SOLID_FAMILIES & FLUID_FAMILIES


@pytest.mark.parametrize(("label", "family"), [
    ("Terrestrial planet", "rock"), ("lava world", "rock"), ("Super-Earth", "rock"),
    ("dwarf planet", "rock"), ("iron core remnant", "iron"), ("metal world", "iron"),
    ("icy moon", "ice"), ("frozen world", "ice"), ("dirty ice body", "rock_ice"),
    ("water world", "ocean"), ("Hot Jupiter", "gas_giant"), ("gas giant", "gas_giant"),
    ("mini-Neptune", "ice_giant"), ("ice giant", "ice_giant"), ("T dwarf", "brown_dwarf"),
    ("brown dwarf", "brown_dwarf"), ("red giant", "giant_star"), ("supergiant", "giant_star"),
    ("white dwarf", "white_dwarf"), ("pulsar", "neutron_star"), ("black hole", "black_hole"),
    ("yellow dwarf star", "star"), ("red dwarf", "star"), ("asteroid", "minor"),
    ("comet", "minor"), ("Kuiper belt object", "minor"),
])
def test_labels_are_guessed_by_their_words(label: str, family: str) -> None:
    assert guess_family(label) == family


@pytest.mark.parametrize(("label", "family"), [
    # a specific word wins over a general one that the label also holds
    ("neutron star", "neutron_star"),
    ("white dwarf star", "white_dwarf"), ("brown dwarf star", "brown_dwarf"),
    ("red giant star", "giant_star"), ("ice giant planet", "ice_giant"),
])
def test_the_more_specific_word_wins(label: str, family: str) -> None:
    assert guess_family(label) == family


@pytest.mark.parametrize("label", ["G2V", "M4.5V", "K0 V", "b", "F5 IV", "o"])
def test_spectral_classes_alone_are_main_sequence_stars(label: str) -> None:
    assert guess_family(label) == "star"


@pytest.mark.parametrize("label", ["gas giant", "GAS_GIANT", "rock_ice", " white dwarf "])
def test_a_family_name_given_as_label_is_that_family(label: str) -> None:
    assert guess_family(label) == label.strip().lower().replace(" ", "_")


@pytest.mark.parametrize("label", [None, "", "Xq-7 anomaly", "G2 something"])
def test_labels_without_a_known_word_are_unknown(label: str | None) -> None:
    assert guess_family(label) == "unknown"


def test_parse_family_override() -> None:
    assert parse_family_override(" lava world = rock") == ("lava world", "rock")
    assert parse_family_override("a=b=ice") == ("a=b", "ice")  # the last '=' separates


@pytest.mark.parametrize(("text", "words"), [
    ("lava world", "must look like 'label=family'"), ("=rock", "must look like 'label=family'"),
    ("lava world=lava", "'lava' is not a family; use one of: iron, rock"),
])
def test_bad_family_overrides_say_what_to_do(text: str, words: str) -> None:
    with pytest.raises(FamilyMappingError, match=words) as caught:
        parse_family_override(text)
    assert isinstance(caught.value, InputError) and "\n" not in str(caught.value)


def test_family_mapping_lets_overrides_win() -> None:
    mapping = family_mapping(["lava world", "Xq-7", "comet"], {"Xq-7": "ice"})
    assert mapping == {"lava world": "rock", "Xq-7": "ice", "comet": "minor"}
    assert family_mapping([]) == {}


def test_every_family_has_parameters_and_every_band_a_known_curve() -> None:
    assert set(FAMILY_PARAMETERS) == set(FAMILIES)
    for family, params in FAMILY_PARAMETERS.items():
        assert params.rigidity > 0 and params.quality_factor > 0, family
        band = params.density_band
        if band is None:
            continue
        for curve, factor in ((band.low_curve, band.low_factor),
                              (band.high_curve, band.high_factor)):
            assert factor > 0, family
            assert curve == "const" or curve_density(curve, M_EARTH) > 0, (family, curve)
    assert FAMILY_PARAMETERS["black_hole"].density_band is None


@pytest.mark.parametrize(("family", "mass_earths", "density"), [
    # NASA planetary fact sheets (REFERENCES.md): bulk densities in kg m-3
    ("rock", 1.0, 5514.0), ("rock", 0.107, 3934.0), ("rock", 0.0123, 3344.0),
    ("iron", 0.0553, 5429.0), ("gas_giant", 317.8, 1326.0), ("gas_giant", 95.2, 687.0),
    ("ice_giant", 14.5, 1270.0), ("ice_giant", 17.1, 1638.0),
])
def test_solar_system_densities_lie_inside_their_family_band(family: str, mass_earths: float,
                                                            density: float) -> None:
    """The bands are common practice, chosen so the Solar System's bodies lie inside them."""
    band = FAMILY_PARAMETERS[family].density_band
    assert band is not None
    mass = mass_earths * M_EARTH

    def edge(curve: str, factor: float) -> float:
        return factor if curve == "const" else factor * curve_density(curve, mass)

    assert edge(band.low_curve, band.low_factor) < density < edge(band.high_curve,
                                                                 band.high_factor)
