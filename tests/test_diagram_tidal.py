"""The tidal-locking diagram: age against despinning time, on a catalogue checked by the real
engine, with the tidal-lock-age limit of the settings the catalogue was checked with."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from catalogue_builder import EARTH_LIKE, SUN_LIKE, run

from bodycensus.diagrams import tidal
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.diagrams.shapes import Choice
from bodycensus.science.physics import orbits
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.units import AU, M_EARTH, M_SUN


def _moon(body_id: str, a: float, mass: float, radius: float, age: float) -> dict:
    return {"id": body_id, "label": "rocky moon", "family": "rock", "parent": "P", "mass": mass,
            "radius": radius, "semi_major_axis": a, "eccentricity": 0.0, "tidally_locked": True,
            "age": age}


# The Moon locks in ~2.4e7 yr (Gladman et al. 1996), far less than its age: fine. A small moon
# far out cannot have despun in 1e8 yr: locked too soon (the pair of tests/test_rules.py).
ROWS = [SUN_LIKE, EARTH_LIKE,
        _moon("luna", 3.844e8, 7.3458e22, 1.7374e6, 4.5e9),
        _moon("far", 0.3 * orbits.hill_radius(AU, 0.0167, M_EARTH, M_SUN), 1e19, 1.5e5, 1e8)]


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    work = tmp_path_factory.mktemp("tidal")
    run(ROWS, work)
    return work


def test_bodies_with_an_age_and_a_despinning_time_are_counted(workdir: Path) -> None:
    diagram = compute_aggregates(workdir)["diagrams"]["tidal-locking"]
    assert sum(map(sum, diagram["z"])) == 3  # P, luna and far: the star has no despinning time
    assert [r["body"] for r in diagram["flagged"]] == ["far"]
    far = diagram["flagged"][0]
    # above the limit: despinning time > 10 x age (log10 units on both axes)
    assert far["y"] > math.log10(OrbitSettings().lock_time_factor) + far["x"]


def test_the_limit_is_the_checks_factor(workdir: Path) -> None:
    settings = OrbitSettings(lock_time_factor=1000.0)
    diagram = compute_aggregates(workdir, settings)["diagrams"]["tidal-locking"]
    assert [line["coefficient"] for line in diagram["lines"]] == [1.0, 1000.0]
    fig = tidal.figure(diagram, Choice())
    limit = next(t for t in fig["data"] if t["name"].startswith("tidal-lock-age limit"))
    assert limit["y"][0] - limit["x"][0] == pytest.approx(3.0)  # y = 1000 x on log-log axes


def test_without_ages_there_is_a_sentence(workdir: Path) -> None:
    fig = tidal.figure(None, Choice())
    assert fig["data"] == [] and "age" in fig["layout"]["annotations"][0]["text"]
