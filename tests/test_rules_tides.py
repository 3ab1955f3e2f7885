"""The tide rules and the tidal columns of the derived context: one body that must fire and one
near the limit that must not, per rule, with the source beside each check.

Bodies are synthetic with a known answer, run through the real engine (``catalogue_builder``).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import polars as pl
import pytest
from catalogue_builder import SUN_LIKE, fired, run
from scipy.optimize import brentq

from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.physics import orbits, tides
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.rules.tide_context import family_tides
from bodycensus.science.rules.tides import tide_rules
from bodycensus.science.units import AU, DAY, M_JUPITER, R_JUPITER, R_SUN, YEAR

KM = 1e3
AGE = 4.6e9  # years
# A Jupiter-like planet (JPL SSD mass and mean radius, REFERENCES.md) far from a Sun-like star.
GIANT = {"id": "J", "label": "gas giant", "family": "gas_giant", "parent": "S",
         "mass": 1898.187e24, "radius": 69_911 * KM, "semi_major_axis": 5.2 * AU,
         "eccentricity": 0.048, "rotation_period": 9.925 * 3600, "age": AGE}
IO_MASS, IO_RADIUS = 8.9296e22, 1821.49 * KM  # JPL SSD (REFERENCES.md)


def satellite(body_id: str, a: float, e: float) -> dict[str, Any]:
    """An Io-like rocky moon of J."""
    return {"id": body_id, "label": "rocky moon", "family": "rock", "parent": "J",
            "mass": IO_MASS, "radius": IO_RADIUS, "semi_major_axis": a, "eccentricity": e,
            "age": AGE}


def _rock_flux(a: float, e: float) -> float:
    """The heat flux the engine computes for an Io-like moon of J (rock family parameters)."""
    k2 = orbits.love_number_k2(IO_MASS, IO_RADIUS, FAMILY_PARAMETERS["rock"].rigidity)
    power = tides.tidal_heating_power(a, e, IO_MASS, IO_RADIUS, GIANT["mass"],
                                      k2 / FAMILY_PARAMETERS["rock"].quality_factor)
    return float(tides.surface_heat_flux(power, IO_RADIUS))


def test_tidal_heating(tmp_path: Path) -> None:
    # Peale, Cassen & Reynolds 1979: E ~ e^2, so the eccentricity that puts the flux at a given
    # multiple of Io's 2.4 W/m2 (1e14 W, REFERENCES.md) scales as its square root.
    a = 421_800 * KM  # Io's orbit (JPL mean elements)
    e_at_limit = 0.01 * (tides.IO_HEAT_FLUX / _rock_flux(a, 0.01)) ** 0.5
    rows = [SUN_LIKE, GIANT, satellite("hot", a, 1.5 * e_at_limit),
            satellite("warm", a, 0.95 * e_at_limit), satellite("round", a, 0.0)]
    result = run(rows, tmp_path)
    assert fired(result, "tidal-heating") == {"hot": "note"}
    assert result.findings.filter(rule="tidal-heating")["value"][0] == pytest.approx(
        1.5**2 * tides.IO_HEAT_FLUX, rel=1e-6)
    table = pl.read_parquet(result.bodies).filter(pl.col("id") == "round")
    assert table["tidal_heating"].to_list() == [None]  # circular: no eccentricity tide


# A hot Jupiter about a Sun-like star spinning in 25 d (the Sun: ~25.4 d, from memory).
STAR = {**SUN_LIKE, "rotation_period": 25 * DAY}


def hot_jupiter(body_id: str, a: float, **extra: Any) -> dict[str, Any]:
    return {"id": body_id, "label": "hot jupiter", "family": "gas_giant", "parent": "S",
            "mass": M_JUPITER, "radius": 1.2 * R_JUPITER, "semi_major_axis": a,
            "eccentricity": 0.0, "age": AGE, **extra}


def _a_for_life(fraction: float) -> float:
    """The semi-major axis at which the engine's decay time is ``fraction`` of AGE: the star's
    family Q and rigidity (Q' = 3Q/2k2), ending at the planet's fluid Roche limit."""
    rigidity, quality = (FAMILY_PARAMETERS["star"].rigidity, FAMILY_PARAMETERS["star"]
                         .quality_factor)
    q_prime = tides.modified_quality_factor(
        orbits.love_number_k2(SUN_LIKE["mass"], R_SUN, rigidity), quality)
    density = M_JUPITER / (4 / 3 * 3.141592653589793 * (1.2 * R_JUPITER) ** 3)
    end = orbits.roche_fluid(R_SUN, SUN_LIKE["mass"] / (4 / 3 * 3.141592653589793 * R_SUN**3),
                             density)

    def years_left(a: float) -> float:
        seconds = tides.tidal_decay_time(a, end, SUN_LIKE["mass"], R_SUN, M_JUPITER, q_prime)
        return float(seconds) / YEAR - fraction * AGE

    return float(brentq(years_left, 1.01 * end, 1.0 * AU, rtol=1e-12))


def test_short_lived_orbit(tmp_path: Path) -> None:
    # Constant-Q decay (Jackson, Greenberg & Barnes 2008; Goldreich & Soter 1966): unstable with
    # less than 1 % of the system's age left (OrbitSettings.short_life_fraction), a note with
    # less than one age left, nothing beyond.
    rows = [STAR, hot_jupiter("doomed", _a_for_life(0.005)),
            hot_jupiter("edge", _a_for_life(0.012)), hot_jupiter("late", _a_for_life(0.5)),
            hot_jupiter("safe", _a_for_life(1.05))]
    result = run(rows, tmp_path)
    assert fired(result, "short-lived-orbit") == {"doomed": "unstable", "edge": "note",
                                                  "late": "note"}
    doomed = result.findings.filter(rule="short-lived-orbit", body="doomed").row(0, named=True)
    assert doomed["value"] == pytest.approx(0.005, rel=1e-6)
    assert "in 23 Myr," in doomed["message"]  # the time left: 0.005 x 4.6e9 years


def test_outward_migration_is_not_a_short_life_but_a_retrograde_orbit_decays(
        tmp_path: Path) -> None:
    # Beyond the parent's synchronous orbit the tide pushes a prograde orbit outward (Goldreich &
    # Soter 1966); a retrograde orbit always decays (Triton).
    a = _a_for_life(0.005)
    fast = {**STAR, "id": "F", "rotation_period": 0.5 * orbits.kepler_period(a, SUN_LIKE["mass"],
                                                                             M_JUPITER)}
    rows = [STAR, fast, hot_jupiter("outward", a, parent="F"),
            hot_jupiter("backward", a, parent="F", retrograde=True)]
    result = run(rows, tmp_path)
    assert fired(result, "short-lived-orbit") == {"backward": "unstable"}


def test_a_mutually_locked_pair_does_not_decay(tmp_path: Path) -> None:
    # Pluto spins with Charon's period (6.387 d, NSSDCA, from memory): within 1 % of the orbital
    # period the pair is synchronous and the tide no longer moves the orbit.
    a = _a_for_life(0.005)
    period = orbits.kepler_period(a, SUN_LIKE["mass"], M_JUPITER)
    locked = {**STAR, "id": "L", "rotation_period": 1.005 * period}
    rows = [STAR, locked, hot_jupiter("paired", a, parent="L")]
    table = pl.read_parquet(run(rows, tmp_path).bodies).filter(pl.col("id") == "paired")
    assert table["tidal_decay_time"].to_list() == [None]


def test_family_tides_reads_the_family_parameters() -> None:
    frame = pl.DataFrame({"family": ["rock", "gas_giant", "nonsense"]})
    rigidity, quality = family_tides(pl.col("family"))
    out = frame.select(rigidity.alias("mu"), quality.alias("q"))
    assert out["q"].to_list() == [100.0, 1e5, 100.0]
    assert out["mu"].to_list() == [3e10, 3e10, 3e10]


def test_every_tide_rule_names_its_source() -> None:
    assert {r.id for r in tide_rules(OrbitSettings())} == {"tidal-heating", "short-lived-orbit"}
    assert all(r.source for r in tide_rules(OrbitSettings()))
