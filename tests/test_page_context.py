"""Template contexts beyond a query result: the Diagrams screen, the mapping step, artefact rows
and the Body screen's extras, as plain data (no HTML)."""

from __future__ import annotations

import copy as copy_module
import json
from typing import Any
from urllib.parse import parse_qs, urlsplit

from bodycensus.dashboard.screens import page_context
from bodycensus.dashboard.screens.figure_text import drawn_marks
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import registry
from bodycensus.science.display_units import DisplayChoice


def _url(cat_id: str, *parts: str, state: ViewState | None = None) -> str:
    query = state.to_query() if state else ""
    return "/".join(["", "catalogues", cat_id, *parts]) + (f"?{query}" if query else "")


def _context(aggs: dict[str, Any], query: str) -> Any:
    return page_context.diagram_context("c", aggs, ViewState.from_query(query), _url)


def test_the_chosen_diagram_with_its_caption_and_tab(engine_aggs: dict[str, Any]) -> None:
    context = _context(engine_aggs, "diagram=roche")
    roche = registry.get("roche")
    assert (context["diagram_title"], context["caption"]) == (roche.title, roche.caption)
    assert context["figure"]["data"][0]["type"] == "heatmap" and context["flags"]
    assert [d["key"] for d in context["diagrams"] if d["current"]] == ["roche"]
    assert context["label_choices"] == [] and context["field_choices"] == []


def test_an_unknown_diagram_shows_the_first(engine_aggs: dict[str, Any]) -> None:
    assert _context(engine_aggs, "diagram=nothing-here")["diagram"] == registry.KEYS[0]


def test_density_shows_one_label_at_a_time(engine_aggs: dict[str, Any]) -> None:
    context = _context(engine_aggs, "diagram=density&label=Icy+moon")
    assert context["label"] == "Icy moon" and "Rocky world" in context["label_choices"]
    assert not context["all_labels"]
    assert "Icy moon" in context["figure"]["layout"]["title"]["text"]


def test_distributions_offer_fields_and_every_label(engine_aggs: dict[str, Any]) -> None:
    context = _context(engine_aggs, "diagram=distributions&field=radius&label=nobody")
    assert (context["field"], context["label"], context["all_labels"]) == ("radius", None, True)
    assert "mass" in context["field_choices"] and not context["flags"]


def test_a_figure_is_drawn_once_per_aggregates_document(engine_aggs: dict[str, Any]) -> None:
    """The figure, its JSON for the page and its marks are kept for the same aggregates
    document and choice, and drawn again from another document (a file written again)."""
    first = _context(engine_aggs, "diagram=mass-radius")
    again = _context(engine_aggs, "diagram=mass-radius")
    assert again["figure"] is first["figure"] and again["drawn"] is first["drawn"]
    assert json.loads(str(first["figure_json"])) == json.loads(json.dumps(first["figure"]))
    assert "<" not in str(first["figure_json"])  # safe inside the page's script element
    assert first["drawn"] == drawn_marks(first["figure"])
    assert _context(engine_aggs, "diagram=roche")["figure"] is not first["figure"]
    copy = copy_module.deepcopy(engine_aggs)
    redrawn = _context(copy, "diagram=mass-radius")
    assert redrawn["figure"] is not first["figure"] and redrawn["figure"] == first["figure"]


def test_artefact_rows_say_where_and_link_their_distribution() -> None:
    rows = page_context.artefact_rows("c", [
        {"scope": "label", "label": "Rocky world", "field": "mass", "kind": "gap", "at": None,
         "low": 1.5e24, "high": 2.25e24},
        {"scope": "family", "label": "minor", "field": "radius", "kind": "cutoff", "at": 1000.0,
         "low": None, "high": None}], _url, {"Rocky world": "rock"})  # type: ignore[typeddict-item]
    # in the family's units (M_earth = 5.9722e24 kg, IAU 2015 B3 GM / CODATA G), SI on hover
    assert rows[0]["where"] == "0.2512 – 0.3767 M_earth" and rows[1]["where"] == "at 1 km"
    assert rows[0]["si"] == "1.5e+24 kg – 2.25e+24 kg"
    first = parse_qs(urlsplit(rows[0]["href"]).query)
    assert first == {"diagram": ["distributions"], "field": ["mass"], "label": ["Rocky world"]}
    assert "label" not in parse_qs(urlsplit(rows[1]["href"]).query)  # a family is not a label


def test_numbers_for_cells() -> None:
    f = page_context.format_number
    assert (f(None), f(True), f(1234567), f(0.000123456), f(float("nan")), f("x")) == (
        "", "True", "1,234,567", "0.0001235", "", "x")


def test_mapping_rows_follow_the_files_columns() -> None:
    proposal = {"columns": ["id", "m"], "samples": {"m": ["1e24"]},
                "mapping": {"choices": {"mass": {"column": "m", "field": "mass",
                                                 "unit": "earth_mass", "ambiguous": True}}},
                "families": {"Rocky world": "rock"}}
    context = page_context.mapping_context(proposal)
    assert [r["column"] for r in context["mapping_rows"]] == ["id", "m"]
    assert context["mapping_rows"][1] == {"column": "m", "samples": ["1e24"], "field": "mass",
                                          "unit": "earth_mass", "ambiguous": True}
    assert context["mapping_rows"][0]["field"] is None
    assert context["label_families"] == [("Rocky world", "rock")]
    assert (context["host_columns_text"], context["nulls_text"]) == ("", "")
    again = page_context.mapping_context(proposal, {
        "map": {"id": "id"}, "units": {}, "families": {},
        "hosts": {"name": "star_name", "mass": "star_mass"}, "host_units": {"mass": "solar_mass"},
        "nulls": ["-1", "--"]})
    assert again["host_columns_text"] == "name=star_name, mass=star_mass"
    assert (again["host_units_text"], again["nulls_text"]) == ("mass=solar_mass", "-1, --")


def _body(**extra: Any) -> Any:
    return {"id": "m", "fields": [{"field": "name", "value": "Moon"},
                                  {"field": "label", "value": "rocky moon"}],
            "derived": {"density": 3344.0, "roche_y": 1.2},
            "extra": {"colour": "grey", "_band_low": 1.0},
            "findings": [{"severity": "unstable"}, {"severity": "note"}],
            "system": {"parent": {"id": "p"}, "siblings": [{"id": "s"}], "children": []},
            **extra}


def test_body_extras_name_worst_units_and_relatives() -> None:
    body = _body(fields=[{"field": "name", "value": "Moon"},
                         {"field": "label", "value": "rocky moon"},
                         {"field": "parent", "value": "p"}])
    extras = page_context.body_extras(body, {"unknown_columns": ["colour"]})
    assert (extras["name"], extras["label"], extras["worst"]) == ("Moon", "rocky moon",
                                                                 "unstable")
    # density in g/cm3 (3344 kg/m3 = 3.344 g/cm3, the Moon's, JPL SSD); a ratio has no unit
    assert {d["name"]: (d["text"], d["unit"]) for d in extras["derived"]} == {
        "density": ("3.344", "g/cm3"), "roche_y": ("1.2", "")}
    assert [(r["id"], r["relation"]) for r in extras["relatives"]] == [("p", "parent"),
                                                                       ("s", "sibling")]
    assert not extras["relatives_capped"]


def test_a_primary_hides_its_orbit_rows_and_says_why_once() -> None:
    derived = {"density": 1408.0, "periapsis": None, "roche_rigid": None, "hill_ratio": None,
               "escape_speed": None}
    rows, notes = page_context.derived_rows(derived, "star", has_parent=False,
                                            choice=DisplayChoice())
    assert [r["name"] for r in rows] == ["density"]
    assert len(notes) == 2 and "no parent" in notes[0] and "periapsis" not in notes[1]
    assert notes[1].endswith("escape_speed.")  # the one non-orbit quantity it lacks


def test_file_columns_from_either_shape_of_the_mapping() -> None:
    # the manifest holds the ingest report (mapping nested) or a bare mapping: the same answer
    report = {"mapping": {"unknown_columns": ["colour"], "choices": {}}}
    assert page_context.file_columns(_body(), report) == {"colour": "grey"}
    assert page_context.file_columns(_body(), {"unknown_columns": ["colour"]}) == {
        "colour": "grey"}
    assert page_context.file_columns(_body(), None) == {}
