"""Plot specs: figure dicts from aggregates, checked as data (traces, reference lines, shapes)."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import plotly.graph_objects as go
import pytest
from engine_output import HOSTILE_LABEL, write_engine_output

from bodycensus.diagrams import plots
from bodycensus.diagrams.aggregates import compute_aggregates


@pytest.fixture(scope="module")
def aggs(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    return compute_aggregates(write_engine_output(tmp_path_factory.mktemp("engine")))


def _meta(fig: dict[str, Any], meta: str) -> list[dict[str, Any]]:
    return [t for t in fig["data"] if t.get("meta") == meta]


@pytest.mark.parametrize("plot", plots.PLOTS)
def test_every_figure_is_valid_plotly_and_json(aggs: dict[str, Any], plot: str) -> None:
    fig = plots.figure_for(aggs, plot)
    go.Figure(fig)  # plotly's own validation rejects unknown or malformed properties
    json.dumps(fig, allow_nan=False)


def test_density_figure_shades_the_family_band(aggs: dict[str, Any]) -> None:
    fig = plots.density_figure(aggs, "Rocky world")
    series = next(s for s in aggs["density"]["series"] if s["label"] == "Rocky world")
    band = [s for s in fig["layout"]["shapes"] if s["type"] == "rect"]
    assert len(band) == 1
    assert (band[0]["x0"], band[0]["x1"]) == tuple(series["band"])
    assert fig["data"][0]["type"] == "bar" and sum(fig["data"][0]["y"]) == 60


def test_density_defaults_to_the_most_common_label(aggs: dict[str, Any]) -> None:
    assert plots.density_figure(aggs, None)["data"][0]["name"] == "Rocky world"


def test_flagged_bodies_have_colour_and_shape_per_severity(aggs: dict[str, Any]) -> None:
    fig = plots.density_figure(aggs, "Rocky world")
    flagged = _meta(fig, "flagged")
    by_name = {t["name"].split(" ")[0]: t for t in flagged}
    assert set(by_name) == {"impossible", "suspect"}
    for severity, trace in by_name.items():
        assert (trace["marker"]["color"], trace["marker"]["symbol"]) == \
            plots.SEVERITY_STYLE[severity]
    assert by_name["impossible"]["customdata"] == ["rock-4"]
    colours = {c for c, _ in plots.SEVERITY_STYLE.values()}
    symbols = {s for _, s in plots.SEVERITY_STYLE.values()}
    assert len(colours) == len(symbols) == 5


def test_flagged_markers_sit_on_their_bar(aggs: dict[str, Any]) -> None:
    fig = plots.density_figure(aggs, "Rocky world")
    bars, marker = fig["data"][0], _meta(fig, "flagged")[0]
    width = bars["width"][0]
    index = min(range(len(bars["x"])), key=lambda i: abs(bars["x"][i] - marker["x"][0]))
    assert abs(bars["x"][index] - marker["x"][0]) <= width / 2 + 1e-9
    assert marker["y"][0] > bars["y"][index]


def test_hover_text_is_escaped(aggs: dict[str, Any]) -> None:
    fig = plots.density_figure(aggs, HOSTILE_LABEL)
    hover = _meta(fig, "flagged")[0]["hovertext"][0]
    assert "<img" not in hover and '&lt;img src=x onerror="alert(1)"&gt;' in hover
    assert "<img" not in fig["data"][0]["name"]
    dist = plots.distribution_figure(aggs, "mass")
    assert all("<img" not in t["name"] for t in dist["data"])


def test_mass_radius_has_the_four_composition_curves(aggs: dict[str, Any]) -> None:
    fig = plots.mass_radius_figure(aggs)
    assert fig["data"][0]["type"] == "heatmap"
    names = [t["name"] for t in _meta(fig, "reference")]
    assert [n.split(" (")[0] for n in names] == ["iron", "rock", "water ice", "cold H/He"]


def test_roche_plane_has_rigid_and_fluid_lines(aggs: dict[str, Any]) -> None:
    fig = plots.roche_figure(aggs)
    lines = {t["name"].split(" (")[0]: t for t in _meta(fig, "reference")}
    assert set(lines) == {"rigid Roche limit", "fluid Roche limit", "parent surface"}
    for name, coefficient in (("rigid Roche limit", 2 ** (1 / 3)), ("fluid Roche limit", 2.44)):
        x, y = lines[name]["x"], lines[name]["y"]
        # on log axes the line y = c x is y' = log10(c) + x' (Roche 1849; Shu 1982)
        assert y[0] - x[0] == pytest.approx(math.log10(coefficient))
        assert y[1] - x[1] == pytest.approx(math.log10(coefficient))
    assert _meta(fig, "flagged")[0]["customdata"] == ["moon-0"]


def test_orbit_margins_have_hill_and_kepler_lines(aggs: dict[str, Any]) -> None:
    fig = plots.orbits_figure(aggs)
    refs = {t["name"]: t for t in _meta(fig, "reference")}
    assert set(refs) == {"Hill radius", "stable prograde limit (circular)", "Kepler's third law",
                         "kepler-mismatch tolerance (-5 %)", "kepler-mismatch tolerance (+5 %)"}
    assert refs["kepler-mismatch tolerance (+5 %)"]["x"] == [5.0, 5.0]
    assert refs["Kepler's third law"]["xaxis"] == "x2"
    assert refs["Hill radius"]["x"] == [0.0, 0.0]


def test_distribution_marks_each_artefact_kind(aggs: dict[str, Any]) -> None:
    mass = plots.distribution_figure(aggs, "mass", "Rocky world")
    kinds = {s["name"]: s for s in mass["layout"]["shapes"]}
    assert set(kinds) == {"cutoff", "gap"}
    cutoff = next(a for a in aggs["distributions"]["artefacts"] if a["kind"] == "cutoff")
    assert kinds["cutoff"]["x0"] == pytest.approx(math.log10(cutoff["at"]))
    assert kinds["gap"]["type"] == "rect"
    radius = plots.distribution_figure(aggs, "radius")
    assert len(_meta(radius, "artefact")) == 1  # the spike's marker
    assert [t["name"] for t in mass["data"]] == ["Rocky world"]


def test_unknown_field_falls_back_to_the_first(aggs: dict[str, Any]) -> None:
    fig = plots.distribution_figure(aggs, "no-such-field")
    assert fig["layout"]["xaxis"]["title"]["text"].startswith("mass")


def test_empty_aggregates_give_a_sentence_not_an_error() -> None:
    empty: dict[str, Any] = {"density": None, "mass_radius": None, "roche": None, "hill": None,
                             "kepler": None, "distributions": {"fields": {}, "artefacts": []}}
    for plot in plots.PLOTS:
        fig = plots.figure_for(empty, plot)
        assert fig["data"] == [] and fig["layout"]["annotations"][0]["text"]


def test_figures_of_the_aggregates_file_shape(tmp_path: Path, aggs: dict[str, Any]) -> None:
    # the backend stores aggregates as JSON; figures built from the re-read file are the same
    path = tmp_path / "aggregates.json"
    path.write_text(json.dumps(aggs))
    again = json.loads(path.read_text())
    assert plots.roche_figure(again) == plots.roche_figure(aggs)


def test_one_label_distribution_zooms_to_its_values(aggs: dict[str, Any]) -> None:
    spec = aggs["distributions"]["fields"]["mass"]
    fig = plots.distribution_figure(aggs, "mass", "Icy moon")
    low, high = fig["layout"]["xaxis"]["range"]
    assert low < math.log10(1e21) < high
    assert high - low < (spec["edges"][-1] - spec["edges"][0]) / 2  # moons only, not every label
