"""The mass-radius diagram: a log-log 2-D histogram under the composition curves."""

from __future__ import annotations

import math
from typing import Any

import pytest

from bodycensus.diagrams import mass_radius
from bodycensus.diagrams.shapes import Choice
from bodycensus.science.physics.bodies import composition_radius
from bodycensus.science.units import M_EARTH, R_EARTH


@pytest.fixture(scope="module")
def diagram(engine_aggs: dict[str, Any]) -> Any:
    return engine_aggs["diagrams"]["mass-radius"]


def test_mass_radius_histogram_and_composition_curves(diagram: Any) -> None:
    assert sum(map(sum, diagram["z"])) == 107
    assert len(diagram["z"]) == len(diagram["y_edges"]) - 1
    curves = {c["name"]: c for c in diagram["curves"]}
    assert set(curves) == {"iron", "rock", "water ice", "cold H/He"}
    # at the same mass, iron is smaller than rock, which is smaller than ice (Seager et al. 2007)
    radii = [curves[name]["y"][0] for name in ("iron", "rock", "water ice")]
    assert radii == sorted(radii)
    x0 = curves["rock"]["x"][0]
    expected = math.log10(composition_radius(10**x0 * M_EARTH, "rock") / R_EARTH)
    assert curves["rock"]["y"][0] == pytest.approx(expected)
    assert max(curves["iron"]["x"]) <= math.log10(20) + 1e-9  # the fit's published range


def test_mass_radius_has_the_four_composition_curves(diagram: Any) -> None:
    fig = mass_radius.figure(diagram, Choice())
    assert fig["data"][0]["type"] == "heatmap"
    names = [t["name"] for t in fig["data"] if t.get("meta") == "reference"]
    assert [n.split(" (")[0] for n in names] == ["iron", "rock", "water ice", "cold H/He"]
