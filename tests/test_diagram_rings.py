"""The rings diagram: rings on the Roche plane, on a catalogue checked by the real engine, with
the rigid and fluid lines and the ring-beyond-roche limit the catalogue was checked with."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from catalogue_builder import SUN_LIKE, run

from bodycensus.diagrams import rings
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.diagrams.shapes import Choice
from bodycensus.science.physics import bodies, orbits
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.units import AU

KM = 1e3
# Saturn (JPL SSD) and its A ring (PDS Rings Node, REFERENCES.md), plus a ring far too wide.
SATURN = {"id": "G", "label": "gas giant", "family": "gas_giant", "parent": "S",
          "mass": 568.3174e24, "radius": 58_232 * KM, "semi_major_axis": 9.537 * AU,
          "eccentricity": 0.054, "age": 4.6e9}
ICE_LIMIT = orbits.roche_fluid(58_232 * KM, bodies.bulk_density(568.3174e24, 58_232 * KM), 917.0)


def _ring(ring_id: str, inner: float, outer: float) -> dict:
    return {"id": ring_id, "label": "planetary ring", "family": "ring", "parent": "G",
            "ring_inner": inner, "ring_outer": outer, "age": 4.6e9}


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    work = tmp_path_factory.mktemp("rings")
    run([SUN_LIKE, SATURN, _ring("A", 122_170 * KM, 136_775 * KM),
         _ring("wide", 122_170 * KM, 1.6 * ICE_LIMIT)], work)
    return work


def test_rings_sit_on_the_plane_by_their_outer_edge(workdir: Path) -> None:
    diagram = compute_aggregates(workdir)["diagrams"]["rings"]
    assert sum(map(sum, diagram["z"])) == 2
    [wide] = diagram["flagged"]
    assert (wide["body"], wide["rule"]) == ("wide", "ring-beyond-roche")
    # y / x = 1.6 x 2.44 (log10 units): the wide ring lies 1.6x above the fluid line
    assert wide["y"] - wide["x"] == pytest.approx(math.log10(1.6 * 2.44), rel=1e-9)


def test_the_limit_line_follows_the_settings(workdir: Path) -> None:
    diagram = compute_aggregates(workdir, OrbitSettings(ring_roche_tolerance=1.5))
    coefficients = [ln["coefficient"] for ln in diagram["diagrams"]["rings"]["lines"]]
    assert coefficients == pytest.approx([1.26, 2.44, 2.44 * 1.5], rel=1e-3)
    fig = rings.figure(diagram["diagrams"]["rings"], Choice())
    assert "planet surface (y = 1)" in {t.get("name") for t in fig["data"]}


def test_without_rings_there_is_a_sentence() -> None:
    fig = rings.figure(None, Choice())
    assert fig["data"] == [] and "ring" in fig["layout"]["annotations"][0]["text"]
