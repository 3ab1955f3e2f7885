"""Template context pieces of the screens that need more than a query result: the diagram
chooser, the mapping step, artefact rows and the body's derived quantities and system drawing.

Pure functions over plain data (aggregates, manifests, body details); ``pages`` wires them to
routes.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from typing import Any, cast

from bodycensus.dashboard.screens.shapes import (
    MAX_RELATIVES,
    ArtefactRow,
    BodyDetail,
    BodyExtras,
    DiagramContext,
    DiagramLink,
    MappingContext,
    MappingRow,
    RelativeRow,
    SystemAround,
    column_mapping,
)
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import registry
from bodycensus.diagrams.shapes import Artefact, Choice
from bodycensus.diagrams.system_plot import system_figures
from bodycensus.input.schema import CANONICAL_FIELDS
from bodycensus.input.sniff import ProposalRecord
from bodycensus.science.families import FAMILIES
from bodycensus.science.units import UNITS

CatUrl = Callable[..., str]
DERIVED_UNITS: dict[str, str] = {
    "density": "kg/m3", "gravity": "m/s2", "gravity_g0": "g0", "escape_speed": "m/s",
    "periapsis": "m", "apoapsis": "m", "parent_mass": "kg", "parent_radius": "m",
    "parent_density": "kg/m3", "parent_family": "", "roche_rigid": "m", "roche_fluid": "m",
    "hill_radius": "m", "parent_hill_radius": "m", "stable_hill_limit": "m",
    "kepler_period": "s", "period_ratio": "1", "barycentre_offset": "m",
    "tidal_lock_time": "yr", "roche_x": "1", "roche_y": "1", "hill_ratio": "1",
    "tidal_heating": "W", "tidal_heat_flux": "W/m2", "roche_distance": "1",
    "tidal_decay_time": "yr", "life_to_age": "1", "ring_inner_edge": "m",
    "ring_outer_edge": "m", "ring_planet_radius": "m", "ring_roche_rigid": "m",
    "ring_roche_fluid": "m", "ring_implied_density": "kg/m3", "ring_roche_x": "1",
    "ring_roche_y": "1", "ring_around": "",
}


def format_number(value: Any) -> str:
    """A number for a table cell: 4 significant digits, thousands separators for integers."""
    if value is None or isinstance(value, bool):
        return "" if value is None else str(value)
    if isinstance(value, int):
        return f"{value:,}"
    if isinstance(value, float):
        return f"{value:.4g}" if math.isfinite(value) else ""
    return str(value)


def diagram_links(cat_id: str, cat_url: CatUrl, current: str | None = None
                  ) -> list[DiagramLink]:
    """The chooser: every registered diagram, in order, with its address."""
    return [{"key": d.key, "title": d.title, "current": d.key == current,
             "href": cat_url(cat_id, "diagrams", state=ViewState(diagram=d.key))}
            for d in registry.DIAGRAMS]


def diagram_context(cat_id: str, aggs: Mapping[str, Any], state: ViewState,
                    cat_url: CatUrl) -> DiagramContext:
    """The chosen diagram's figure and caption, its label / field choices and the chooser."""
    diagram = registry.get(state.diagram)
    aggregate = registry.aggregate_of(aggs, diagram.key)
    asked = Choice(label=state.label[0] if state.label else None, field=state.field)
    shown = diagram.resolve(aggregate, asked)
    return {
        "diagram": diagram.key, "diagram_title": diagram.title, "caption": diagram.caption,
        "figure": diagram.figure(aggregate, shown.choice), "flags": bool(diagram.rules),
        "label": shown.label, "field": shown.field, "all_labels": shown.all_labels,
        "label_choices": list(shown.labels), "field_choices": list(shown.fields),
        "diagrams": diagram_links(cat_id, cat_url, diagram.key),
    }


def mapping_context(proposal: ProposalRecord) -> MappingContext:
    """The mapping step: each column with samples and its guessed field and unit."""
    by_column = {c["column"]: c for c in proposal["mapping"]["choices"].values()}
    rows: list[MappingRow] = [
        {"column": column, "samples": proposal["samples"].get(column, []),
         "field": by_column[column]["field"] if column in by_column else None,
         "unit": by_column[column]["unit"] if column in by_column else None,
         "ambiguous": column in by_column and by_column[column]["ambiguous"]}
        for column in proposal["columns"]]
    return {"proposal": proposal, "mapping_rows": rows, "fields": CANONICAL_FIELDS,
            "units": list(UNITS), "families_all": FAMILIES,
            "label_families": sorted(proposal["families"].items())}


def artefact_rows(cat_id: str, artefacts: list[Artefact], cat_url: CatUrl
                  ) -> list[ArtefactRow]:
    """Artefacts with where they are, in words, and a link to their distribution diagram."""
    rows: list[ArtefactRow] = []
    for a in artefacts:
        n = format_number
        where = (f"{n(a.get('low'))} – {n(a.get('high'))}" if a.get("kind") == "gap"
                 else f"at {n(a.get('at'))}")
        label = a.get("label")
        state = ViewState(diagram="distributions", field=a.get("field"),
                          label=(label,) if a.get("scope") == "label" and label else ())
        rows.append({**a, "where": where, "href": cat_url(cat_id, "diagrams", state=state)})
    return rows


def _relatives(system: SystemAround) -> list[RelativeRow]:
    """Parent, siblings and children of a body as table rows."""
    parent = system["parent"]
    rows = [cast(RelativeRow, {**parent, "relation": "parent"})] if parent else []
    rows += [cast(RelativeRow, {**r, "relation": "sibling"}) for r in system["siblings"]]
    rows += [cast(RelativeRow, {**r, "relation": "child"}) for r in system["children"]]
    return rows


def file_columns(detail: BodyDetail, mapping: Mapping[str, Any] | None) -> dict[str, Any]:
    """The body's values in the file's own unmapped columns (not the engine's work columns)."""
    unknown = set(column_mapping(mapping).get("unknown_columns") or [])
    return {k: v for k, v in (detail.get("extra") or {}).items() if k in unknown}


def body_extras(detail: BodyDetail, mapping: Mapping[str, Any] | None) -> BodyExtras:
    """Body screen extras: name, label, worst severity, derived rows, relatives, drawings."""
    fields = {f["field"]: f["value"] for f in detail["fields"]}
    figures, default, caption = system_figures(detail)
    system: SystemAround = detail.get("system") or {"parent": None, "siblings": [],
                                                      "children": []}
    return {
        "name": fields.get("name"), "label": fields.get("label"), "family": fields.get("family"),
        "worst": detail["findings"][0]["severity"] if detail["findings"] else None,
        "derived": [{"name": k, "value": v, "unit": DERIVED_UNITS.get(k, "")}
                    for k, v in detail["derived"].items()],
        "relatives": _relatives(system), "file_columns": file_columns(detail, mapping),
        "relatives_capped": max(len(system["siblings"]), len(system["children"]))
                            >= MAX_RELATIVES,
        "system_figures": figures, "system_default": default, "system_caption": caption,
    }
