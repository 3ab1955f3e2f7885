"""The tidal-heating diagram: heat flux against distance in fluid Roche limits, on a catalogue
checked by the real engine, with Io's heat flux and the Roche limits as reference lines."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from catalogue_builder import SUN_LIKE, run

from bodycensus.diagrams import heating
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.diagrams.shapes import Choice
from bodycensus.science.physics.tides import IO_HEAT_FLUX
from bodycensus.science.units import AU

KM = 1e3
# A Jupiter-like giant (JPL SSD) and Io-like moons (JPL SSD mass and radius) at Io's distance.
GIANT = {"id": "J", "label": "gas giant", "family": "gas_giant", "parent": "S",
         "mass": 1898.187e24, "radius": 69_911 * KM, "semi_major_axis": 5.2 * AU,
         "eccentricity": 0.048, "age": 4.6e9}


def _moon(body_id: str, e: float) -> dict:
    return {"id": body_id, "label": "rocky moon", "family": "rock", "parent": "J",
            "mass": 8.9296e22, "radius": 1821.49 * KM, "semi_major_axis": 421_800 * KM,
            "eccentricity": e, "age": 4.6e9}


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    work = tmp_path_factory.mktemp("heating")
    # e = 0.004 gives 0.08 W/m2 with the rock family's k2/Q (computed); 0.05 gives ~13 W/m2.
    run([SUN_LIKE, GIANT, _moon("io-like", 0.004), _moon("forced", 0.05), _moon("round", 0.0)],
        work)
    return work


def test_eccentric_bodies_are_counted_and_the_hot_one_flagged(workdir: Path) -> None:
    diagram = compute_aggregates(workdir)["diagrams"]["tidal-heating"]
    assert sum(map(sum, diagram["z"])) == 3  # J about the star, two eccentric moons; not "round"
    assert [r["body"] for r in diagram["flagged"]] == ["forced"]
    assert diagram["flagged"][0]["y"] > math.log10(IO_HEAT_FLUX)
    assert diagram["io_flux"] == pytest.approx(math.log10(IO_HEAT_FLUX))
    # the rigid limit sits at 1.26 / 2.44 fluid limits (Shu 1982; Roche 1849)
    assert 10 ** diagram["rigid"] == pytest.approx(1.26 / 2.44, rel=1e-2)


def test_the_figure_draws_the_limits_and_io(workdir: Path) -> None:
    fig = heating.figure(compute_aggregates(workdir)["diagrams"]["tidal-heating"], Choice())
    names = [t.get("name", "") for t in fig["data"]]
    assert {"rigid Roche limit", "fluid Roche limit"} <= set(names)
    io = next(t for t in fig["data"] if t.get("name", "").startswith("Io's heat flux"))
    assert io["y"][0] == pytest.approx(math.log10(IO_HEAT_FLUX))
    assert any(t.get("meta") == "flagged" for t in fig["data"])


def test_without_eccentric_orbits_there_is_a_sentence() -> None:
    fig = heating.figure(None, Choice())
    assert fig["data"] == [] and "eccentric" in fig["layout"]["annotations"][0]["text"]
