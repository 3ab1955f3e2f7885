"""The text twin of a figure: every marked point once, its hover text as plain text."""

from __future__ import annotations

from bodycensus.dashboard.screens.figure_text import drawn_marks, plain_text
from bodycensus.diagrams.plots import flagged_traces

HOSTILE = "<img src=x onerror=alert(1)>"


def _row(body: str, severity: str, label: str = "rocky moon") -> dict[str, object]:
    return {"body": body, "label": label, "severity": severity, "rule": "inside-rigid-roche",
            "message": "periapsis 1213 km is inside the rigid Roche limit 3323 km",
            "x": 1.0, "y": 0.5}


def test_plain_text_drops_tags_and_decodes_escaped_catalogue_text() -> None:
    assert plain_text("<b>a &amp; b</b>") == "a & b"
    assert plain_text("label: &lt;img src=x onerror=alert(1)&gt;") == f"label: {HOSTILE}"


def test_each_flagged_body_once_most_serious_trace_first_with_its_hover_text() -> None:
    rows = [_row("m-1", "note"), _row("m-2", "impossible", HOSTILE), _row("m-3", "impossible")]
    panels = flagged_traces(rows) + flagged_traces(rows[:1], axes=("x2", "y2"))  # m-1 twice
    figure = {"data": [{"type": "heatmap", "z": [[1]]}, *panels]}
    marks = drawn_marks(figure)
    assert [(m["severity"], m["body"]) for m in marks] == [
        ("impossible", "m-2"), ("impossible", "m-3"), ("note", "m-1")]
    assert marks[0]["text"] == (f"label: {HOSTILE} · impossible: inside-rigid-roche · "
                                "periapsis 1213 km is inside the rigid Roche limit 3323 km")


def test_artefact_spikes_are_listed_without_a_body() -> None:
    spike = {"type": "scatter", "meta": "artefact", "name": "spike", "x": [3.8], "y": [9],
             "hovertext": ["spike in asteroid: 41 bodies at 6013 (expected 3)"]}
    reference = {"type": "scatter", "meta": "reference", "name": "rigid Roche limit"}
    assert drawn_marks({"data": [reference, spike]}) == [
        {"severity": None, "body": None, "text": "spike in asteroid: 41 bodies at 6013 "
                                                 "(expected 3)"}]
    assert drawn_marks({"data": []}) == []
