"""The density diagram: each label's bodies on a mass-density plane of its own, under its
family's band drawn at every mass, so what lies outside the edges is what family-density flags."""

from __future__ import annotations

import math
from typing import Any

import pytest
from engine_output import HOSTILE_LABEL

from bodycensus.diagrams import density
from bodycensus.diagrams.shapes import Choice
from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.rules.bands import band_density


@pytest.fixture(scope="module")
def diagram(engine_aggs: dict[str, Any]) -> Any:
    return engine_aggs["diagrams"]["density"]


def _plane(diagram: Any, label: str) -> Any:
    return next(s for s in diagram["series"] if s["label"] == label)


def test_each_label_counts_every_body_on_bins_of_its_own(diagram: Any) -> None:
    rock, star = _plane(diagram, "Rocky world"), _plane(diagram, "G2V")
    assert sum(n for _, _, n in rock["cells"]) == 60
    assert sum(n for _, _, n in star["cells"]) == 3
    for one in diagram["series"]:
        assert len(one["x_edges"]) == len(one["y_edges"]) == density.BINS + 1
    # the Sun (1410 kg m-3, NSSDCA) lies on the star plane, below the rocky worlds' densities
    assert star["y_edges"][0] < math.log10(1410) < star["y_edges"][-1]
    assert star["y_edges"][0] < rock["y_edges"][0]


def test_the_band_is_the_rules_band_at_each_mass(diagram: Any) -> None:
    rock = _plane(diagram, "Rocky world")
    band = rock["band"]
    assert band["x"][0] == rock["x_edges"][0] and band["x"][-1] == rock["x_edges"][-1]
    for x, low, high in zip(band["x"], band["low"], band["high"], strict=True):
        expected = band_density(FAMILY_PARAMETERS["rock"].density_band, 10.0 ** x)
        assert expected is not None
        assert (low, high) == pytest.approx((math.log10(expected[0]), math.log10(expected[1])))
    assert low != band["low"][0]  # an edge that moves with mass, not one band for the label
    assert _plane(diagram, HOSTILE_LABEL)["band"] is None  # the unknown family has none


def test_the_body_rules_are_the_ones_drawn() -> None:
    assert "denser-than-iron" in density.RULES and "label-outlier" in density.RULES
    assert "inside-rigid-roche" not in density.RULES


def test_the_figure_draws_both_edges_and_its_axes_count_a_curators_units(diagram: Any) -> None:
    fig = density.figure(diagram, Choice(label="Rocky world"))
    edges = [t for t in fig["data"] if t.get("meta") == "reference"]
    assert [t["name"] for t in edges] == ["plausible band, lower edge (family-density)",
                                          "plausible band, upper edge (family-density)"]
    assert edges[1]["fill"] == "tonexty" and fig["data"][0]["type"] == "heatmap"
    assert fig["layout"]["xaxis"]["title"]["text"] == "mass (M_earth)"
    # ticks count g/cm3 on an axis that stays in log10 kg m-3: 1 g/cm3 sits at 3
    y = fig["layout"]["yaxis"]
    assert any(v == pytest.approx(3.0) and t.startswith("10<sup>0") for v, t in
               zip(y["tickvals"], y["ticktext"], strict=True))
    assert fig["layout"]["meta"] == {"plane": True}  # a region drawn on it spans x and y


def test_density_defaults_to_the_most_common_label(diagram: Any) -> None:
    assert "Rocky world" in density.figure(diagram, Choice())["layout"]["title"]["text"]


def test_a_label_is_chosen_among_the_drawn_ones(diagram: Any) -> None:
    assert density.choices(diagram, Choice(label="Icy moon")).label == "Icy moon"
    fallback = density.choices(diagram, Choice(label="no such label"))
    assert fallback.label == "Rocky world" and "G2V" in fallback.labels
    assert not fallback.all_labels


def test_flagged_bodies_sit_at_their_mass_and_density(diagram: Any) -> None:
    fig = density.figure(diagram, Choice(label="Rocky world"))
    flagged = [r for r in diagram["flagged"] if r["label"] == "Rocky world"]
    drawn = [(x, y) for t in fig["data"] if t.get("meta") == "flagged"
             for x, y in zip(t["x"], t["y"], strict=True)]
    assert sorted(drawn) == sorted((r["x"], r["y"]) for r in flagged) and drawn


def test_a_family_without_a_band_says_so(diagram: Any) -> None:
    fig = density.figure(diagram, Choice(label=HOSTILE_LABEL))
    assert "has no density band" in fig["layout"]["annotations"][0]["text"]
