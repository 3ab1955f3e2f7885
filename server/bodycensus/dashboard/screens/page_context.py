"""Template context pieces of the screens that need more than a query result: the diagram
chooser, the mapping step, artefact rows and the body's derived quantities and system drawing.

Pure functions over plain data (aggregates, manifests, body details); ``pages`` wires them to
routes.
"""

from __future__ import annotations

import math
import threading
from collections import OrderedDict
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, cast

from jinja2.utils import htmlsafe_json_dumps
from markupsafe import Markup

from bodycensus.dashboard.screens.figure_text import drawn_marks
from bodycensus.dashboard.screens.shapes import (
    MAX_RELATIVES,
    ArtefactRow,
    BodyDetail,
    BodyExtras,
    DerivedRow,
    DiagramContext,
    DiagramLink,
    DrawnMark,
    DrawnPage,
    MappingContext,
    MappingRow,
    RelativeRow,
    SystemAround,
    column_mapping,
)
from bodycensus.dashboard.screens.shown import field_shown, quantity_shown
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import registry
from bodycensus.diagrams.shapes import Artefact, Choice, Figure
from bodycensus.diagrams.system_plot import system_figures
from bodycensus.input.schema import CANONICAL_FIELDS, ROW_NUMBERS
from bodycensus.input.sniff import ProposalRecord
from bodycensus.science.display_units import FAMILY_UNITS, FIELD_QUANTITIES, DisplayChoice
from bodycensus.science.families import FAMILIES, explain_family
from bodycensus.science.rules import all_rules
from bodycensus.science.severity import SEVERITIES
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


@dataclass(frozen=True)
class Drawn:
    """A diagram drawn from one aggregates document: the figure, its JSON for the page and
    its marked points; ``aggs`` is kept so that its ``id`` stays its own while cached."""

    aggs: Mapping[str, Any]
    figure: Figure
    text: Markup
    marks: list[DrawnMark]


DRAWN_KEPT = 8  # figures kept (a 10M catalogue's mass-radius figure is ~0.6 MB of JSON)
_DRAWN: OrderedDict[tuple[int, str, Choice], Drawn] = OrderedDict()
_DRAWN_LOCK = threading.Lock()


def _drawn(aggs: Mapping[str, Any], key: str, choice: Choice) -> Drawn:
    """The diagram ``key`` for ``choice`` drawn from ``aggs``, drawn once per aggregates
    document (``queries.aggregates`` gives the same one until its file changes): the figure, its
    JSON and its marks took ~15 ms a request at 10M bodies, the same every time."""
    slot = (id(aggs), key, choice)
    with _DRAWN_LOCK:
        kept = _DRAWN.get(slot)
        if kept is not None and kept.aggs is aggs:
            _DRAWN.move_to_end(slot)
            return kept
    diagram = registry.get(key)
    figure = diagram.figure(registry.aggregate_of(aggs, key), choice)
    drawn = Drawn(aggs, figure, htmlsafe_json_dumps(figure), drawn_marks(figure))
    with _DRAWN_LOCK:
        _DRAWN[slot] = drawn
        while len(_DRAWN) > DRAWN_KEPT:
            _DRAWN.popitem(last=False)
    return drawn


def diagram_context(cat_id: str, aggs: Mapping[str, Any], state: ViewState,
                    cat_url: CatUrl) -> DiagramContext:
    """The chosen diagram's figure and caption, its label / field choices and the chooser."""
    diagram = registry.get(state.diagram)
    aggregate = registry.aggregate_of(aggs, diagram.key)
    asked = Choice(label=state.label[0] if state.label else None, field=state.field)
    shown = diagram.resolve(aggregate, asked)
    drawn = _drawn(aggs, diagram.key, shown.choice)
    return {
        "diagram": diagram.key, "diagram_title": diagram.title, "caption": diagram.caption,
        "figure": drawn.figure, "figure_json": drawn.text, "drawn": drawn.marks,
        "flags": bool(diagram.rules),
        "label": shown.label, "field": shown.field, "all_labels": shown.all_labels,
        "label_choices": list(shown.labels), "field_choices": list(shown.fields),
        "diagrams": diagram_links(cat_id, cat_url, diagram.key),
    }


DRAWN_PAGE = 100  # marked points listed per page of the diagram's table (2,000 drawn at most)


def drawn_page(marks: Sequence[DrawnMark], state: ViewState,
               page_url: Callable[[ViewState], str]) -> DrawnPage:
    """One page of a diagram's marked points (``offset`` in the view, ``DRAWN_PAGE`` rows),
    with the addresses of the pages before and after it: the table lists every marker, a page
    at a time, so the page stays small (2,000 rows of a 10M catalogue were 1.3 MB of HTML
    rendered on every request)."""
    total = len(marks)
    first = min(state.offset, max(0, total - 1)) // DRAWN_PAGE * DRAWN_PAGE
    shown = list(marks[first:first + DRAWN_PAGE])

    def at(offset: int) -> str:
        return page_url(state.with_(offset=offset)) + "#drawn"

    return {"items": shown, "total": total, "first": first + 1 if shown else 0,
            "last": first + len(shown),
            "prev_href": at(max(0, first - DRAWN_PAGE)) if first else None,
            "next_href": at(first + DRAWN_PAGE) if first + DRAWN_PAGE < total else None}


def mapping_context(proposal: ProposalRecord, preset: Mapping[str, Any] | None = None
                    ) -> MappingContext:
    """The mapping step: each column with samples and its guessed (or preset) field and unit,
    the id's column (or the row numbers), and each label's family with why it was guessed and
    what the family ``unknown`` turns off."""
    by_column = {c["column"]: c for c in proposal["mapping"]["choices"].values()}
    chosen = dict((preset or {}).get("map") or {})
    units = dict((preset or {}).get("units") or {})
    field_of = {column: field for field, column in chosen.items() if field != "id"} if preset \
        else {c: by_column[c]["field"] for c in by_column if by_column[c]["field"] != "id"}
    rows: list[MappingRow] = [
        {"column": column, "samples": proposal["samples"].get(column, []),
         "field": field_of.get(column),
         "unit": units.get(field_of.get(column) or "") if preset else
         (by_column[column]["unit"] if column in by_column else None),
         "ambiguous": not preset and column in by_column and by_column[column]["ambiguous"]}
        for column in proposal["columns"]]
    id_choice = proposal["mapping"]["choices"].get("id")
    id_column = chosen.get("id") if preset else (id_choice["column"] if id_choice else None)
    families = dict((preset or {}).get("families") or {})
    labels = []
    for label, guessed in sorted(proposal["families"].items()):
        family, why = families.get(label, guessed), explain_family(label)[1]
        if family != guessed:
            why = f"chosen before (the label alone suggests {guessed}: {why})"
        labels.append({"label": label, "family": family, "why": why})
    before = preset or {}
    pairs = {key: ", ".join(f"{f}={c}" for f, c in dict(before.get(key) or {}).items())
             for key in ("hosts", "host_units")}
    return {"host_columns_text": pairs["hosts"], "host_units_text": pairs["host_units"],
            "nulls_text": ", ".join(before.get("nulls") or []),
            "proposal": proposal, "mapping_rows": rows,
            "fields": tuple(f for f in CANONICAL_FIELDS if f != "id"), "units": list(UNITS),
            "families_all": FAMILIES, "label_families": [(r["label"], r["family"])
                                                         for r in labels],
            "label_rows": labels, "id_column": id_column, "row_numbers": ROW_NUMBERS,
            "unknown_turns_off": unknown_turns_off()}


def unknown_turns_off() -> list[str]:
    """The rules a body of family ``unknown`` is not checked by (they need a composition)."""
    banded = {"family-density", "unit-slip"}  # need the family's density band
    return sorted({r.id for r in all_rules() if r.families is not None and
                   "unknown" not in r.families} | banded)


def rules_summary(rules: Sequence[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """One entry per rule from the aggregates' (rule, severity, count) rows: its count at each
    severity, its total and its most serious severity; most serious first, then most findings."""
    merged: dict[str, dict[str, Any]] = {}
    for r in rules:
        entry = merged.setdefault(r["rule"], {"rule": r["rule"], "counts": {}, "total": 0})
        entry["counts"][r["severity"]] = entry["counts"].get(r["severity"], 0) + r["count"]
        entry["total"] += r["count"]
    for entry in merged.values():
        entry["counts"] = {s: entry["counts"][s] for s in SEVERITIES if s in entry["counts"]}
        entry["worst"] = next(iter(entry["counts"]))
    return sorted(merged.values(), key=lambda e: (SEVERITIES.index(e["worst"]), -e["total"],
                                                  e["rule"]))


def artefact_rows(cat_id: str, artefacts: list[Artefact], cat_url: CatUrl,
                  label_families: Mapping[str, str] | None = None,
                  choice: DisplayChoice = FAMILY_UNITS) -> list[ArtefactRow]:
    """Artefacts with where they are, in words and in the unit of their family (SI on hover),
    and a link to their distribution diagram. An artefact found in a family that is also found,
    at the same place, in the family's one label is listed once, saying it was found in both."""
    families = dict(label_families or {})
    rows: list[ArtefactRow] = []
    for a in _merge_family_twins(artefacts, families):
        label, family = a.get("label"), a.get("label")
        if a.get("scope") == "label":
            family = families.get(label or "")
        quantity = FIELD_QUANTITIES.get(a.get("field") or "")
        ends = [quantity_shown(a.get(k), quantity, family, choice) for k in ("low", "high", "at")]
        low, high, at = ends
        where = (f"{low['text']} – {high['text']} {high['unit']}" if a.get("kind") == "gap"
                 else f"at {at['text']} {at['unit']}").strip()
        state = ViewState(diagram="distributions", field=a.get("field"),
                          label=(label,) if a.get("scope") == "label" and label else ())
        row = cast(ArtefactRow, {**a, "where": where, "href": cat_url(cat_id, "diagrams",
                                                                      state=state),
                                 "si": " – ".join(e["si"] for e in ends if e["si"])})
        rows.append(row)
    return rows


def _merge_family_twins(artefacts: list[Artefact], families: Mapping[str, str]
                        ) -> list[Artefact]:
    """Artefacts with each family-wide twin of a label's artefact folded into the label's row:
    the detector scans every label and every family, so a family with one label finds the same
    edge twice; ``also`` says so instead of a second row."""
    def place(a: Artefact) -> tuple[Any, ...]:
        return a.get("field"), a.get("kind"), *(None if a.get(k) is None else
                                                 float(f"{a.get(k):.6g}")
                                                 for k in ("at", "low", "high"))
    by_label = {(families.get(a.get("label") or ""), *place(a)): a for a in artefacts
                if a.get("scope") == "label"}
    out: list[Artefact] = []
    for a in artefacts:
        twin = by_label.get((a.get("label"), *place(a))) if a.get("scope") == "family" else None
        if twin is None:
            out.append(a)
            continue
        cast(ArtefactRow, twin)["also"] = f"also found across family {a.get('label')}"
    return out


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


# Derived quantities of an orbit: they apply only to a body with a parent.
ORBIT_DERIVED = frozenset({
    "periapsis", "apoapsis", "parent_mass", "parent_radius", "parent_density", "parent_family",
    "roche_rigid", "roche_fluid", "hill_radius", "parent_hill_radius", "stable_hill_limit",
    "kepler_period", "period_ratio", "barycentre_offset", "tidal_lock_time", "roche_x",
    "roche_y", "hill_ratio", "tidal_heating", "tidal_heat_flux", "roche_distance",
    "tidal_decay_time", "life_to_age"})
# Derived quantities of a ring: they apply only to a ring, or a planet that carries one.
RING_DERIVED = frozenset({
    "ring_inner_edge", "ring_outer_edge", "ring_planet_radius", "ring_roche_rigid",
    "ring_roche_fluid", "ring_implied_density", "ring_roche_x", "ring_roche_y"})
_PARENT_SIDE = ("parent_mass", "parent_radius", "parent_density")


def derived_rows(derived: Mapping[str, Any], family: str | None, has_parent: bool,
                 choice: DisplayChoice, orbit: float | None = None
                 ) -> tuple[list[DerivedRow], list[str]]:
    """The derived quantities a body has, in display units (its distances in the unit of its
    ``orbit``, the semi-major axis), and one sentence per group of those hidden: the orbit's
    when it has no parent, the others' when their inputs are missing."""
    parent_family = derived.get("parent_family")
    rows: list[DerivedRow] = []
    missing: list[str] = []
    no_ring = all(derived.get(name) is None for name in RING_DERIVED)
    for name, value in derived.items():
        if (name in ORBIT_DERIVED and not has_parent) or (name in RING_DERIVED and no_ring):
            continue
        if value is None:
            missing.append(name)
            continue
        whose = parent_family if name in _PARENT_SIDE else family
        size = orbit if FIELD_QUANTITIES.get(name) == "distance" else None
        shown = field_shown(name, value, whose, choice, size)
        unit = shown["unit"] or DERIVED_UNITS.get(name, "")
        rows.append({"name": name, "value": value, "text": shown["text"],
                     "unit": "" if unit == "1" else unit, "si": shown["si"]})
    notes = []
    if not has_parent:
        notes.append("It orbits no body in this catalogue (no parent), so the quantities of an "
                     "orbit (periapsis, Roche limits, Hill radius, Kepler period, ...) do not "
                     "apply and are not listed.")
    if no_ring and any(name in derived for name in RING_DERIVED):
        notes.append("It is no ring and carries none, so the quantities of a ring (its edges, "
                     "its Roche limits, the density its edge implies) are not listed.")
    if missing:
        notes.append("Not computed for want of the values they need (see the fields above): "
                     + ", ".join(missing) + ".")
    return rows, notes


def body_extras(detail: BodyDetail, mapping: Mapping[str, Any] | None,
                choice: DisplayChoice = FAMILY_UNITS) -> BodyExtras:
    """Body screen extras: name, label, worst severity, fields and derived rows in display
    units, relatives, drawings."""
    fields = {f["field"]: f["value"] for f in detail["fields"]}
    family = fields.get("family")
    figures, default, caption = system_figures(detail)
    system: SystemAround = detail.get("system") or {"parent": None, "siblings": [],
                                                      "children": []}
    derived, notes = derived_rows(detail["derived"], family, fields.get("parent") is not None,
                                  choice, fields.get("semi_major_axis"))
    relatives = [{**r, "shown": field_shown("semi_major_axis", r.get("semi_major_axis"),
                                             r.get("family"), choice)}
                 for r in _relatives(system)]
    return {
        "name": fields.get("name"), "label": fields.get("label"), "family": family,
        "worst": detail["findings"][0]["severity"] if detail["findings"] else None,
        "derived": derived, "derived_notes": notes,
        "fields_shown": {f["field"]: field_shown(f["field"], f["value"], family, choice)
                         for f in detail["fields"]},
        "relatives": cast(list[RelativeRow], relatives),
        "file_columns": file_columns(detail, mapping),
        "relatives_capped": max(len(system["siblings"]), len(system["children"]))
                            >= MAX_RELATIVES,
        "system_figures": figures, "system_default": default, "system_caption": caption,
    }
