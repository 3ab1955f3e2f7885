"""The figures' shared look and pieces, checked as data: every registered figure is valid
plotly, flagged bodies carry colour and shape per severity, catalogue text is escaped."""

from __future__ import annotations

import json
import re
from importlib.resources import files
from pathlib import Path
from typing import Any

import plotly.graph_objects as go
import pytest
from engine_output import HOSTILE_LABEL

from bodycensus.diagrams import plots, registry
from bodycensus.diagrams.shapes import Choice
from bodycensus.science.severity import SEVERITIES


def _figure(aggs: dict[str, Any], key: str, choice: Choice | None = None) -> Any:
    """A registered diagram's figure from stored aggregates, as the Diagrams screen draws it."""
    diagram = registry.get(key)
    return diagram.figure(registry.aggregate_of(aggs, key), choice or Choice())


def _meta(fig: Any, meta: str) -> list[dict[str, Any]]:
    return [t for t in fig["data"] if t.get("meta") == meta]


@pytest.mark.parametrize("plot", registry.KEYS)
def test_every_figure_is_valid_plotly_and_json(engine_aggs: dict[str, Any], plot: str) -> None:
    fig = _figure(engine_aggs, plot)
    go.Figure(fig)  # plotly's own validation rejects unknown or malformed properties
    json.dumps(fig, allow_nan=False)


def test_flagged_bodies_have_colour_and_shape_per_severity(engine_aggs: dict[str, Any]) -> None:
    fig = _figure(engine_aggs, "density", Choice(label="Rocky world"))
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


def test_every_severity_has_a_style_and_the_pages_colour() -> None:
    assert tuple(plots.SEVERITY_STYLE) == SEVERITIES
    css = (files("bodycensus.web") / "static" / "app.css").read_text(encoding="utf-8")
    for severity, (colour, _) in plots.SEVERITY_STYLE.items():
        found = re.search(rf"--sev-{severity}:\s*(#[0-9a-fA-F]{{6}})", css)
        assert found and found.group(1).lower() == colour, severity


def test_hover_text_is_escaped(engine_aggs: dict[str, Any]) -> None:
    fig = _figure(engine_aggs, "density", Choice(label=HOSTILE_LABEL))
    hover = _meta(fig, "flagged")[0]["hovertext"][0]
    assert "<img" not in hover and '&lt;img src=x onerror="alert(1)"&gt;' in hover
    assert "<img" not in fig["data"][0]["name"]
    dist = _figure(engine_aggs, "distributions", Choice(field="mass"))
    assert all("<img" not in t["name"] for t in dist["data"])


def test_empty_aggregates_give_a_sentence_not_an_error() -> None:
    empty: dict[str, Any] = {"diagrams": dict.fromkeys(registry.KEYS)}
    for plot in registry.KEYS:
        fig = _figure(empty, plot)
        assert fig["data"] == [] and fig["layout"]["annotations"][0]["text"]


def test_figures_of_the_aggregates_file_shape(tmp_path: Path,
                                              engine_aggs: dict[str, Any]) -> None:
    # the backend stores aggregates as JSON; figures built from the re-read file are the same
    path = tmp_path / "aggregates.json"
    path.write_text(json.dumps(engine_aggs))
    again = json.loads(path.read_text())
    for plot in registry.KEYS:
        assert _figure(again, plot) == _figure(engine_aggs, plot)


def test_log_ticks_are_powers_of_ten_with_steps_on_narrow_axes() -> None:
    wide = plots.log_ticks(0.0, 6.0)
    assert wide["tickvals"] == [0, 1, 2, 3, 4, 5, 6]
    narrow = plots.log_ticks(0.1, 1.9)
    assert len(narrow["tickvals"]) > 3 and "2·10<sup>0</sup>" in narrow["ticktext"]


def test_markers_stack_on_their_bar() -> None:
    rows: Any = [{"x": 0.5}, {"x": 0.6}, {"x": 2.5}]
    ys = plots.on_bars(rows, [0.0, 1.0, 2.0, 3.0], [10, 0, 4])
    assert ys[0] > 10 and ys[1] > ys[0]  # the second of the same bar sits higher
    assert 4 < ys[2] < ys[0]
