"""The Compare screen's figure (diagrams/shift.py): both runs' histograms on shared edges."""

from __future__ import annotations

from bodycensus.diagrams.shift import figure

ROW = {"label": "<b>gas giant</b>", "field": "mass", "scale": "log10", "shifted": True,
       "statistic": 0.3, "q_value": 1e-9, "effect": 0.8,
       "histogram": {"edges": [27.0, 27.5, 28.0], "old": [0.75, 0.25], "new": [0.25, 0.75]}}


def test_two_translucent_bar_traces_on_the_same_bins() -> None:
    fig = figure(ROW, "week 48", "week 49")
    old, new = fig["data"]
    assert (old["name"], new["name"]) == ("old: week 48", "new: week 49")
    assert old["x"] == new["x"] == [27.25, 27.75]
    assert (old["y"], new["y"]) == ([0.75, 0.25], [0.25, 0.75])
    assert fig["layout"]["barmode"] == "overlay"
    assert fig["layout"]["xaxis"]["title"]["text"] == "mass (kg, log scale)"
    title = fig["layout"]["title"]["text"]
    assert "&lt;b&gt;gas giant&lt;/b&gt;" in title and "shifted" in title  # label escaped


def test_no_row_gives_an_empty_figure_that_says_why() -> None:
    fig = figure(None, "a", "b")
    assert fig["data"] == [] and "enough systems" in fig["layout"]["annotations"][0]["text"]
