"""The distributions diagram: one field per label on shared bins, artefacts marked."""

from __future__ import annotations

import math
from typing import Any

import pytest

from bodycensus.diagrams import distributions
from bodycensus.diagrams.shapes import Choice


@pytest.fixture(scope="module")
def diagram(engine_aggs: dict[str, Any]) -> Any:
    return engine_aggs["diagrams"]["distributions"]


def _meta(fig: Any, meta: str) -> list[dict[str, Any]]:
    return [t for t in fig["data"] if t.get("meta") == meta]


def test_distributions_per_field_and_label_with_artefacts(diagram: Any) -> None:
    mass = diagram["fields"]["mass"]
    assert mass["log"] and mass["unit"] == "kg"
    by_label = {s["label"]: sum(s["counts"]) for s in mass["series"]}
    assert by_label["Rocky world"] == 60
    assert diagram["fields"]["eccentricity"]["log"] is False
    assert {a["kind"] for a in diagram["artefacts"]} == {"cutoff", "gap", "spike"}


def test_distribution_marks_each_artefact_kind(diagram: Any) -> None:
    mass = distributions.figure(diagram, Choice(field="mass", label="Rocky world"))
    kinds = {s["name"]: s for s in mass["layout"]["shapes"]}
    assert set(kinds) == {"cutoff", "gap"}
    cutoff = next(a for a in diagram["artefacts"] if a["kind"] == "cutoff")
    assert kinds["cutoff"]["x0"] == pytest.approx(math.log10(cutoff["at"]))
    assert kinds["gap"]["type"] == "rect"
    radius = distributions.figure(diagram, Choice(field="radius"))
    assert len(_meta(radius, "artefact")) == 1  # the spike's marker
    assert [t["name"] for t in mass["data"]] == ["Rocky world"]


def test_an_artefact_of_a_family_shows_for_its_labels(diagram: Any) -> None:
    # the same cutoff found over the family rock (not the label) marks the rocky label's plot
    family = {**diagram, "artefacts": [{**a, "scope": "family", "label": "rock"}
                                       for a in diagram["artefacts"] if a["kind"] == "cutoff"]}
    shown = distributions.figure(family, Choice(field="mass", label="Rocky world"))
    assert [s["name"] for s in shown["layout"]["shapes"]] == ["cutoff"]
    other = distributions.figure(family, Choice(field="mass", label="Gas giant"))
    assert other["layout"]["shapes"] == []


def test_unknown_field_falls_back_to_the_first(diagram: Any) -> None:
    fig = distributions.figure(diagram, Choice(field="no-such-field"))
    titles = [v["title"]["text"] for k, v in fig["layout"].items()
              if k.startswith("xaxis") and v.get("title", {}).get("text")]
    assert len(titles) == 1 and titles[0].startswith("mass")  # named once, bottom left


def test_every_label_gets_a_panel_of_its_own_on_a_shared_axis(diagram: Any) -> None:
    fig = distributions.figure(diagram, Choice(field="mass"))
    series = diagram["fields"]["mass"]["series"]
    steps = [t for t in fig["data"] if t.get("meta") is None]
    assert len(steps) == len(series) > 1
    assert len({t["xaxis"] for t in steps}) == len(series)  # one panel each
    titles = {a["text"] for a in fig["layout"]["annotations"]}
    assert {s["label"] for s in series} <= {t.replace("&lt;", "<").replace("&gt;", ">")
                                             .replace("&amp;", "&") for t in titles}
    axes = [v for k, v in fig["layout"].items() if k.startswith("xaxis")]
    assert all(a.get("matches") == "x" for a in axes[1:])  # shared x
    assert len({tuple(a["range"]) for a in axes}) == 1
    # each mark says where it was found: the cutoff of Rocky world sits in that panel only
    cutoffs = [s for s in fig["layout"]["shapes"] if s["name"] == "cutoff"]
    rocky = next(i for i, s in enumerate(series) if s["label"] == "Rocky world")
    assert [c["xref"] for c in cutoffs] == ["x" if rocky == 0 else f"x{rocky + 1}"]
    assert cutoffs[0]["label"]["text"] == "cutoff (Rocky world)"


def test_a_spike_is_named_with_its_label(diagram: Any) -> None:
    fig = distributions.figure(diagram, Choice(field="radius"))
    spike = _meta(fig, "artefact")[0]
    assert spike["name"].startswith("spike in ") and spike["text"][0].startswith("spike (")


def test_choices_offer_every_field_and_every_label(diagram: Any) -> None:
    chosen = distributions.choices(diagram, Choice(field="radius", label="Gas giant"))
    assert (chosen.field, chosen.label, chosen.all_labels) == ("radius", "Gas giant", True)
    assert "mass" in chosen.fields and "Icy moon" in chosen.labels
    unknown = distributions.choices(diagram, Choice(field="nope", label="nobody"))
    assert (unknown.field, unknown.label) == ("mass", None)  # the first field, every label


def test_one_label_distribution_zooms_to_its_values(diagram: Any) -> None:
    spec = diagram["fields"]["mass"]
    fig = distributions.figure(diagram, Choice(field="mass", label="Icy moon"))
    low, high = fig["layout"]["xaxis"]["range"]
    assert low < math.log10(1e21) < high
    assert high - low < (spec["edges"][-1] - spec["edges"][0]) / 2  # moons only, not every label
