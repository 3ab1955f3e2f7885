"""Template context pieces of the screens that need more than a query result: the diagram
chooser, the mapping step, artefact rows and the body's derived quantities and system drawing.

Pure functions over plain data (aggregates, manifests, body details); ``pages`` wires them to
routes.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from bodycensus.dashboard.screens.queries import MAX_RELATIVES
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import plots
from bodycensus.diagrams.system_plot import system_figures
from bodycensus.input.schema import CANONICAL_FIELDS
from bodycensus.science.families import FAMILIES
from bodycensus.science.units import UNITS

CatUrl = Callable[..., str]
DIAGRAMS: dict[str, str] = {
    "density": "Density", "mass-radius": "Mass and radius", "roche": "Roche plane",
    "orbits": "Orbit margins", "distributions": "Distributions",
}
CAPTIONS: dict[str, str] = {
    "density": "Bulk density of the bodies of one label; shaded: the plausible band of its "
               "family at the label's median mass (composition curves of Seager et al. 2007, "
               "cold H/He, stellar relations; factors in families.py).",
    "mass-radius": "Bodies binned by mass and radius (log-log); lines: radius of a cold sphere "
                   "of pure iron, rock (MgSiO3) and water ice (Seager et al. 2007 fits, up to "
                   "20 Earth masses) and of cold hydrogen-helium.",
    "roche": "x = (parent density / body density)^(1/3), y = periapsis / parent radius. Under "
             "the rigid line y = 1.26 x (Shu 1982) or the fluid line y = 2.44 x (Roche 1849) "
             "a body is inside that Roche limit; under y = 1 its orbit cuts the parent.",
    "orbits": "Left: apoapsis over the parent's Hill radius, with the stable prograde limit "
              "0.49 (Domingos, Winter & Yokoyama 2006). Right: how far each period is from "
              "Kepler's third law, in per cent, with the 5 % tolerance of kepler-mismatch; "
              "bodies beyond +-10 % sit at the ends.",
    "distributions": "Histogram of a numeric field per label; artefacts found in it are marked: "
                     "a line at a cutoff, a shaded band for a gap, a star for a spike.",
}
DERIVED_UNITS: dict[str, str] = {
    "density": "kg/m3", "gravity": "m/s2", "gravity_g0": "g0", "escape_speed": "m/s",
    "periapsis": "m", "apoapsis": "m", "parent_mass": "kg", "parent_radius": "m",
    "parent_density": "kg/m3", "parent_family": "", "roche_rigid": "m", "roche_fluid": "m",
    "hill_radius": "m", "parent_hill_radius": "m", "stable_hill_limit": "m",
    "kepler_period": "s", "period_ratio": "1", "barycentre_offset": "m",
    "tidal_lock_time": "yr", "roche_x": "1", "roche_y": "1", "hill_ratio": "1",
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


def diagram_context(cat_id: str, aggs: dict[str, Any], state: ViewState,
                    cat_url: CatUrl) -> dict[str, Any]:
    """The chosen diagram's figure, its tabs and its label / field choices."""
    diagram = state.diagram if state.diagram in DIAGRAMS else "density"
    label = state.label[0] if state.label else None
    fields = list((aggs.get("distributions") or {}).get("fields", {}))
    field = state.field if state.field in fields else (fields[0] if fields else None)
    labels: list[str] = []
    if diagram == "density" and aggs.get("density"):
        labels = [s["label"] for s in aggs["density"]["series"]]
        label = label if label in labels else (labels[0] if labels else None)
    elif diagram == "distributions" and field:
        labels = [s["label"] for s in aggs["distributions"]["fields"][field]["series"]]
        label = label if label in labels else None
    return {
        "diagram": diagram, "diagram_title": DIAGRAMS[diagram], "caption": CAPTIONS[diagram],
        "figure": plots.figure_for(aggs, diagram, label, field),
        "label": label, "field": field, "label_choices": labels,
        "field_choices": fields if diagram == "distributions" else [],
        "diagrams": [{"title": title, "current": key == diagram,
                      "href": cat_url(cat_id, "diagrams", state=ViewState(diagram=key))}
                     for key, title in DIAGRAMS.items()],
    }


def mapping_context(proposal: dict[str, Any]) -> dict[str, Any]:
    """The mapping step: each column with samples and its guessed field and unit."""
    choices = (proposal.get("mapping") or {}).get("choices", {})
    by_column = {c["column"]: c for c in choices.values()}
    rows = [{"column": column, "samples": proposal.get("samples", {}).get(column, []),
             "field": by_column.get(column, {}).get("field"),
             "unit": by_column.get(column, {}).get("unit"),
             "ambiguous": by_column.get(column, {}).get("ambiguous", False)}
            for column in proposal.get("columns", [])]
    return {"proposal": proposal, "mapping_rows": rows, "fields": CANONICAL_FIELDS,
            "units": list(UNITS), "families_all": FAMILIES,
            "label_families": sorted((proposal.get("families") or {}).items())}


def artefact_rows(cat_id: str, artefacts: list[dict[str, Any]],
                  cat_url: CatUrl) -> list[dict[str, Any]]:
    """Artefacts with where they are, in words, and a link to their distribution diagram."""
    rows = []
    for a in artefacts:
        n = format_number
        where = (f"{n(a.get('low'))} – {n(a.get('high'))}" if a.get("kind") == "gap"
                 else f"at {n(a.get('at'))}")
        label = (a.get("label"),) if a.get("scope") == "label" and a.get("label") else ()
        state = ViewState(diagram="distributions", field=a.get("field"), label=label)
        rows.append({**a, "where": where, "href": cat_url(cat_id, "diagrams", state=state)})
    return rows


def _relatives(system: dict[str, Any]) -> list[dict[str, Any]]:
    """Parent, siblings and children of a body as table rows."""
    rows = [{**system["parent"], "relation": "parent"}] if system.get("parent") else []
    rows += [{**r, "relation": "sibling"} for r in system.get("siblings", [])]
    rows += [{**r, "relation": "child"} for r in system.get("children", [])]
    return rows


def file_columns(detail: dict[str, Any], mapping: dict[str, Any] | None) -> dict[str, Any]:
    """The body's values in the file's own unmapped columns (not the engine's work columns)."""
    unknown = set((mapping or {}).get("unknown_columns") or
                  ((mapping or {}).get("mapping") or {}).get("unknown_columns") or [])
    return {k: v for k, v in (detail.get("extra") or {}).items() if k in unknown}


def body_extras(detail: dict[str, Any], mapping: dict[str, Any] | None) -> dict[str, Any]:
    """Body screen extras: name, label, worst severity, derived rows, relatives, drawings."""
    fields = {f["field"]: f["value"] for f in detail["fields"]}
    figures, default, caption = system_figures(detail)
    system = detail.get("system") or {}
    return {
        "name": fields.get("name"), "label": fields.get("label"), "family": fields.get("family"),
        "worst": detail["findings"][0]["severity"] if detail["findings"] else None,
        "derived": [{"name": k, "value": v, "unit": DERIVED_UNITS.get(k, "")}
                    for k, v in detail["derived"].items()],
        "relatives": _relatives(system), "file_columns": file_columns(detail, mapping),
        "relatives_capped": any(len(system.get(k) or []) >= MAX_RELATIVES
                                for k in ("siblings", "children")),
        "system_figures": figures, "system_default": default, "system_caption": caption,
    }
