"""Values as a curator reads them (screens/shown.py): a finding's value, limit and message in
one unit, the unit of its family or its size; SI kept for the hover; the URL's choice honoured.

Oracle: astropy.units for the factors (IAU 2015 B3 nominal M_sun; the IAU au)."""

from __future__ import annotations

import astropy.units as u
import pytest

from bodycensus.dashboard.screens.shown import finding_shown, number, quantity_shown
from bodycensus.science.display_units import FAMILY_UNITS, SI_UNITS, DisplayChoice

ROCHE = {"body": "m1", "rule": "inside-rigid-roche", "severity": "impossible",
         "value": 1.213e6, "limit": 3.323e6, "unit": "m", "family": "rock",
         "message": "periapsis 1213 km is inside the rigid Roche limit 3323 km"}
NEUTRON = {"body": "n1", "rule": "over-neutron-star-max", "severity": "impossible",
           "value": 3.2, "limit": 3.0, "unit": "M_sun", "family": "neutron_star",
           "message": "mass 3.2 M_sun is above the limit 3 M_sun"}


def test_value_limit_and_message_share_the_unit_of_the_limit() -> None:
    shown = finding_shown(ROCHE, FAMILY_UNITS)["shown"]
    assert (shown["value"], shown["limit"], shown["unit"]) == ("1,213", "3,323", "km")
    assert shown["message"] == ROCHE["message"]
    assert shown["si"] == "value 1.213e+06 m, limit 3.323e+06 m"


def test_si_and_a_pinned_unit_say_all_three_again() -> None:
    shown = finding_shown(ROCHE, SI_UNITS)["shown"]
    assert (shown["value"], shown["limit"], shown["unit"]) == ("1,213,000", "3,323,000", "m")
    assert shown["message"] == "periapsis 1.213e6 m is inside the rigid Roche limit 3.323e6 m"
    in_kg = finding_shown(NEUTRON, SI_UNITS)["shown"]
    m_sun = (1 * u.M_sun).to(u.kg).value
    assert in_kg["unit"] == "kg" and in_kg["value"] == number(3.2 * m_sun)
    pinned = finding_shown(ROCHE, DisplayChoice(fixed={"length": "au"}))["shown"]
    assert pinned["unit"] == "au" and pinned["limit"] == number(3.323e6 / u.au.to(u.m))


def test_a_rule_in_its_own_unit_keeps_it_by_family() -> None:
    shown = finding_shown(NEUTRON, FAMILY_UNITS)["shown"]
    assert (shown["value"], shown["limit"], shown["unit"]) == ("3.2", "3", "M_sun")


def test_a_quantity_without_a_value_or_a_unit_shows_as_it_is() -> None:
    assert quantity_shown(None, "mass", "rock", FAMILY_UNITS)["text"] == ""
    assert quantity_shown("B1", None, None, FAMILY_UNITS)["text"] == "B1"
    earth = quantity_shown(5.9722e24, "mass", "rock", FAMILY_UNITS)
    assert earth["unit"] == "M_earth" and earth["text"] == "1" and earth["si"].endswith("kg")


@pytest.mark.parametrize("value, text", [(1234.5, "1,234"), (12345.6, "12,346"), (0.5, "0.5"),
                                         (3.3e7, "3.3e7"), (2e-4, "2e-4")])
def test_numbers_in_cells(value: float, text: str) -> None:
    assert number(value) == text
