"""The density diagram: per-label histograms on bins of their own, the family band shaded."""

from __future__ import annotations

import math
from typing import Any

import pytest
from engine_output import HOSTILE_LABEL

from bodycensus.diagrams import density
from bodycensus.diagrams.base import BINS
from bodycensus.diagrams.shapes import Choice
from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.rules.bands import band_density


@pytest.fixture(scope="module")
def diagram(engine_aggs: dict[str, Any]) -> Any:
    return engine_aggs["diagrams"]["density"]


def test_density_histogram_counts_every_body_of_the_label(diagram: Any) -> None:
    series = {s["label"]: s for s in diagram["series"]}
    assert sum(series["Rocky world"]["counts"]) == 60
    assert sum(series["G2V"]["counts"]) == 3
    for one in diagram["series"]:
        assert len(one["edges"]) == BINS + 1
    # each label has bins of its own, spanning its data and (within reach) its family's band
    rock, star = series["Rocky world"], series["G2V"]
    assert rock["edges"][0] <= rock["band"][0] and rock["edges"][-1] >= rock["band"][1]
    assert star["edges"][0] < math.log10(1410) < rock["edges"][0]  # the Sun: 1410 kg m-3


def test_density_band_is_the_familys_band_at_the_median_mass(diagram: Any) -> None:
    series = {s["label"]: s for s in diagram["series"]}
    rock = series["Rocky world"]
    low, high = band_density(FAMILY_PARAMETERS["rock"].density_band, rock["median_mass"])
    assert rock["band"] == pytest.approx([math.log10(low), math.log10(high)])
    assert series[HOSTILE_LABEL]["band"] is None  # the unknown family has no band


def test_the_body_rules_are_the_ones_drawn() -> None:
    # every rule that judges a body on its own; none about orbits
    assert "denser-than-iron" in density.RULES and "label-outlier" in density.RULES
    assert "inside-rigid-roche" not in density.RULES


def test_density_figure_shades_the_family_band(diagram: Any) -> None:
    fig = density.figure(diagram, Choice(label="Rocky world"))
    series = next(s for s in diagram["series"] if s["label"] == "Rocky world")
    band = [s for s in fig["layout"]["shapes"] if s["type"] == "rect"]
    assert len(band) == 1
    assert (band[0]["x0"], band[0]["x1"]) == tuple(series["band"])
    assert fig["data"][0]["type"] == "bar" and sum(fig["data"][0]["y"]) == 60


def test_density_defaults_to_the_most_common_label(diagram: Any) -> None:
    assert density.figure(diagram, Choice())["data"][0]["name"] == "Rocky world"


def test_a_label_is_chosen_among_the_drawn_ones(diagram: Any) -> None:
    assert density.choices(diagram, Choice(label="Icy moon")).label == "Icy moon"
    fallback = density.choices(diagram, Choice(label="no such label"))
    assert fallback.label == "Rocky world" and "G2V" in fallback.labels
    assert not fallback.all_labels


def test_flagged_markers_sit_on_their_bar(diagram: Any) -> None:
    fig = density.figure(diagram, Choice(label="Rocky world"))
    bars, marker = fig["data"][0], [t for t in fig["data"] if t.get("meta") == "flagged"][0]
    width = bars["width"][0]
    index = min(range(len(bars["x"])), key=lambda i: abs(bars["x"][i] - marker["x"][0]))
    assert abs(bars["x"][index] - marker["x"][0]) <= width / 2 + 1e-9
    assert marker["y"][0] > bars["y"][index]
