"""The orbit margins: the Hill ratio and the Kepler residual, with their reference lines."""

from __future__ import annotations

from typing import Any

import pytest

from bodycensus.diagrams import orbits
from bodycensus.diagrams.plots import LIMIT_STYLE
from bodycensus.diagrams.shapes import Choice


@pytest.fixture(scope="module")
def diagram(engine_aggs: dict[str, Any]) -> Any:
    return engine_aggs["diagrams"]["orbits"]


def test_orbit_histograms_include_their_reference_values(diagram: Any) -> None:
    hill, kepler = diagram["hill"], diagram["kepler"]
    assert sum(hill["counts"]) == 20
    assert sum(kepler["counts"]) == 100  # every body with a parent
    for panel in (hill, kepler):
        for line in panel["lines"]:
            assert panel["edges"][0] < line["at"] < panel["edges"][-1]
    assert [r["body"] for r in kepler["flagged"]] == ["moon-5"]
    # residual (P / P_Kepler - 1) in per cent, held at the +10 % end of the window
    assert kepler["flagged"][0]["x"] == pytest.approx(10.0)
    assert kepler["edges"][0] == pytest.approx(-10.0) and kepler["edges"][-1] == pytest.approx(10.0)


def test_orbit_margins_have_hill_and_kepler_lines(diagram: Any) -> None:
    fig = orbits.figure(diagram, Choice())
    lines = [t for t in fig["data"] if t.get("meta") == "reference"]
    refs = {t["name"]: t for t in lines}
    assert set(refs) == {"Hill radius (outside-hill-sphere beyond)",
                         "stable prograde limit, circular (beyond-stable-hill beyond)",
                         "Kepler's third law", "kepler-mismatch tolerance (+-5 %)"}
    tolerance = [t["x"] for t in lines if t["name"].startswith("kepler-mismatch")]
    assert sorted(tolerance) == [[-5.0, -5.0], [5.0, 5.0]]
    assert [t["showlegend"] for t in lines if t["name"].startswith("kepler")] == [True, False]
    assert refs["Kepler's third law"]["xaxis"] == "x2"
    assert refs["Hill radius (outside-hill-sphere beyond)"]["x"] == [0.0, 0.0]


def test_one_line_style_means_one_thing_in_both_panels(diagram: Any) -> None:
    """A law is thin solid grey; a rule's limit has its severity's colour and dash, the same
    in either panel; no two meanings share a style."""
    fig = orbits.figure(diagram, Choice())
    style = {(t["line"]["color"], t["line"]["dash"]) for t in fig["data"]
             if t.get("meta") == "reference"}
    meanings = {line["meaning"] for panel in (diagram["hill"], diagram["kepler"])
                for line in panel["lines"]}
    assert meanings == {"reference", "impossible", "unstable", "suspect"}
    assert style == {LIMIT_STYLE[m] for m in meanings} and len(style) == len(meanings)


def test_the_tolerance_line_is_the_runs() -> None:
    # a catalogue checked with a 12 % tolerance draws its lines at -12 and +12 %
    assert [line["at"] for line in orbits.kepler_lines(0.12)] == pytest.approx([0, -12, 12])


def test_the_stable_limit_is_the_published_fraction() -> None:
    # 0.4895 r_H for circular prograde orbits (Domingos, Winter & Yokoyama 2006)
    stable = orbits.hill_lines()[1]["at"]
    assert 10 ** stable == pytest.approx(0.4895)


def test_one_panel_without_the_other(diagram: Any) -> None:
    fig = orbits.figure({"hill": None, "kepler": diagram["kepler"]}, Choice())
    assert {t["xaxis"] for t in fig["data"]} == {"x2"}
