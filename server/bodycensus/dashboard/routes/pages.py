"""The dashboard's HTML screens: each renders, with a jinja2 template, the data its JSON twin
(linked from the page) returns. State lives in the URL query, parsed and built by ViewState;
data comes from ``queries`` and the Store, so no handler holds polars logic.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path
from typing import Any
from urllib.parse import quote, unquote

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from fastapi.templating import Jinja2Templates

from bodycensus.dashboard.deps import StoreDep
from bodycensus.dashboard.routes.page_tools import (
    blanks_dropped,
    rule_option,
    sort_groups,
    units_menu,
)
from bodycensus.dashboard.screens import groups, queries, report
from bodycensus.dashboard.screens.page_context import (
    artefact_rows,
    body_extras,
    diagram_context,
    diagram_links,
    drawn_page,
    format_number,
    rules_summary,
)
from bodycensus.dashboard.screens.regions import describe
from bodycensus.dashboard.screens.search import names_for
from bodycensus.dashboard.screens.shown import finding_shown, row_shown
from bodycensus.dashboard.screens.triage import (
    counts_by,
    decisions_of,
    system_groups,
    triage_counts,
)
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import registry
from bodycensus.input.formats import accepted
from bodycensus.science.families import FAMILIES
from bodycensus.science.rules import RULES_BY_ID
from bodycensus.science.severity import SEVERITIES
from bodycensus.storage.manifest import Manifest
from bodycensus.storage.store import SavedView, Store

TEMPLATES_DIR = Path(str(files("bodycensus.web") / "templates"))
templates = Jinja2Templates(directory=TEMPLATES_DIR)  # autoescape is on for every template
templates.env.filters["num"] = format_number
templates.env.auto_reload = False  # compiled once: the packaged templates do not change under a
# running server, and checking each one's file on every render cost time under load
router = APIRouter(include_in_schema=False)
LABELS_SHOWN = 40
NAME_COOKIE = "bodycensus_name"  # who decides: the name typed in a decide form (triage.js)
GROUPS_ON_OVERVIEW = 12
def cat_url(cat_id: str, *parts: str, state: ViewState | None = None) -> str:
    """The page of a catalogue (or below it), with a view's query when given."""
    path = "/".join([f"/catalogues/{quote(cat_id, safe='')}", *[quote(p, safe='') for p in parts]])
    query = state.to_query() if state else ""
    return f"{path}?{query}" if query else path


def who(request: Request) -> str:
    """The name the person last typed in a decide form (kept in a cookie by triage.js)."""
    return unquote(request.cookies.get(NAME_COOKIE, ""))[:200]


def _render(request: Request, template: str, **context: Any) -> HTMLResponse:
    """Render a screen with the keys every template expects."""
    context.setdefault("catalogue", None)
    context.setdefault("query", "")
    context.setdefault("severities", SEVERITIES)
    if "state" in context and context.get("units_menu", True):
        context["units_menu"] = units_menu(context["state"], request)
    return templates.TemplateResponse(request, template, context)


@router.get("/", response_class=HTMLResponse)
def catalogues_page(request: Request, store: StoreDep) -> HTMLResponse:
    """Catalogues: every catalogue in the data directory, and the upload box."""
    catalogues = [m.to_json() for m in store.list()]
    return _render(request, "catalogues.html", screen="catalogues", catalogues=catalogues,
                   json_url="/api/catalogues", accepted=accepted())


def overview_context(store: Store, manifest: Manifest, state: ViewState | None = None
                     ) -> dict[str, Any]:
    """Overview: findings grouped by rule and label first, counts by severity and rule (one
    entry per rule), labels, families, coverage, ingest problems, artefacts, saved views."""
    cat_id, state = manifest.id, state or ViewState()
    context: dict[str, Any] = {"screen": "overview", "catalogue": manifest.to_json(),
                               "json_url": f"/api/catalogues/{quote(cat_id, safe='')}",
                               "kept": store.kept_source(cat_id) is not None
                               if manifest.status == "ready" else False}
    if manifest.status != "ready":
        return context
    cat_dir = store.ready_dir(cat_id)
    aggs, overview = queries.aggregates(cat_dir), queries.overview(cat_dir, manifest.to_json())
    summary = overview["summary"]

    def findings(**filters: Any) -> str:
        return cat_url(cat_id, "findings", state=ViewState(**filters))

    labels, grouped = aggs["labels"], groups.groups(cat_dir, ViewState())
    return {
        **context, "json_url": context["json_url"] + "/overview", "state": state,
        "groups": group_rows(cat_id, grouped[:GROUPS_ON_OVERVIEW]),
        "more_groups": max(0, len(grouped) - GROUPS_ON_OVERVIEW),
        "groups_href": cat_url(cat_id, "findings", "groups"),
        "severity": [{**s, "href": findings(severity=(s["severity"],))} for s in aggs["severity"]],
        "rules": [{**r, "href": findings(rule=(r["rule"],)),
                   "links": {s: findings(rule=(r["rule"],), severity=(s,)) for s in r["counts"]}}
                  for r in rules_summary(aggs["rules"])],
        "labels": [{**lb, "findings_href": findings(label=(lb["label"],)),
                    "bodies_href": cat_url(cat_id, "bodies", state=ViewState(
                        label=(lb["label"],))),
                    "density_href": cat_url(cat_id, "diagrams", state=ViewState(
                        diagram="density", label=(lb["label"],)))}
                   for lb in labels[:LABELS_SHOWN] if lb["label"] is not None],
        "more_labels": max(0, len(labels) - LABELS_SHOWN),
        "families": [{**f, "href": findings(family=(f["family"],))} for f in aggs["families"]
                     if f["family"] is not None],
        "unmapped_labels": summary.get("unmapped_labels", []),
        "coverage": [{**c, "severities": RULES_BY_ID[c["rule"]].severities
                      if c["rule"] in RULES_BY_ID else (c["severity"],)}
                     for c in overview["coverage"]],
        "bad_cells": sorted((summary.get("bad_cells") or {}).items()),
        "reading_notes": list(summary.get("reading_notes") or []),
        "artefacts": artefact_rows(cat_id, overview["artefacts"], cat_url,
                                   summary.get("label_families"), state.display),
        "more_artefacts": overview["artefacts_total"] - len(overview["artefacts"]),
        "artefacts_href": f"/api/catalogues/{quote(cat_id, safe='')}/artefacts",
        "diagrams": diagram_links(cat_id, cat_url),
        "views": [{**v.__dict__, "url": v.url} for v in store.list_views(cat_id)],
        "triage": triage_counts(cat_dir, decisions_of(store, cat_id)[1]),
        "triage_href": cat_url(cat_id, "triage"),
        "undecided_href": findings(undecided=True),
        "disk": store.disk_bytes(cat_id),
    }


def group_rows(cat_id: str, found: list[groups.Group]) -> list[dict[str, Any]]:
    """Groups of findings with the link of each cell: the group's list, each severity's part of
    it, and each example body."""
    rows = []
    for g in found:
        state = ViewState(rule=(g["rule"],), label=(g["label"],) if g["label"] else ())
        rows.append({**g, "href": cat_url(cat_id, "findings", state=state),
                     "links": {s: cat_url(cat_id, "findings", state=state.with_(severity=(s,)))
                               for s in g["counts"]},
                     "examples": [{**e, "href": cat_url(cat_id, "bodies", e["body"])}
                                  for e in g["examples"]]})
    return rows


@router.get("/catalogues/{catalogue_id}", response_class=HTMLResponse)
def overview_page(request: Request, catalogue_id: str, store: StoreDep) -> Response:
    """Overview of a ready catalogue; its progress while ingesting; its mapping step's page."""
    manifest = store.get(catalogue_id)
    if manifest.status == "mapping":
        return RedirectResponse(cat_url(catalogue_id, "mapping"), status_code=303)
    state = ViewState.from_query(request.query_params)
    context = overview_context(store, manifest, state)
    context["families_all"] = FAMILIES
    return _render(request, "overview.html", **context)


def findings_context(store: Store, cat_id: str, state: ViewState) -> dict[str, Any]:
    """Findings: one server-side page of the filtered, sorted list, with its filter form; each
    value, limit and message in the view's units."""
    cat_dir = store.ready_dir(cat_id)
    page = queries.findings_page(cat_dir, state, decisions_of(store, cat_id)[1])
    aggs = queries.aggregates(cat_dir)
    query = state.to_query()
    prev_state = state.with_(offset=max(0, state.offset - state.limit))
    next_state = state.with_(offset=state.offset + state.limit)
    items = [finding_shown(f, state.display) for f in page["items"]]
    return {
        "screen": "findings", "catalogue": store.get(cat_id).to_json(), "state": state,
        "page": {**page, "items": items}, "query": query, "default_query": "sort=severity",
        "json_url": f"/api/catalogues/{quote(cat_id, safe='')}/findings" + (f"?{query}" if query
                                                                          else ""),
        "rule_options": [(r["rule"], rule_option(r)) for r in
                         sorted(rules_summary(aggs["rules"]), key=lambda r: r["rule"])],
        "label_options": sorted(lb["label"] for lb in aggs["labels"] if lb["label"] is not None),
        "family_options": sorted(f["family"] for f in aggs["families"] if f["family"]),
        "sort_groups": sort_groups(), "region": describe(state),
        "prev_href": cat_url(cat_id, "findings", state=prev_state) if state.offset else None,
        "next_href": (cat_url(cat_id, "findings", state=next_state)
                      if state.offset + state.limit < page["total"] else None),
        "export_csv": _export_url(cat_id, "findings", "csv", state),
        "export_parquet": _export_url(cat_id, "findings", "parquet", state),
        "groups_href": cat_url(cat_id, "findings", "groups", state=_group_state(state)),
        "decide_url": f"/api/catalogues/{quote(cat_id, safe='')}/decisions",
        "undecided_toggle": cat_url(cat_id, "findings", state=state.with_(
            undecided=not state.undecided, offset=0)),
    }


def _group_state(state: ViewState) -> ViewState:
    """The filters that carry over between the list and its groups."""
    return ViewState(severity=state.severity, rule=state.rule, label=state.label,
                     family=state.family, units=state.units, unit=state.unit)


def _export_url(cat_id: str, what: str, fmt: str, state: ViewState) -> str:
    """The API export of every filtered finding or body (no paging)."""
    query = state.with_(offset=0, limit=ViewState.limit).to_query()
    path = f"/api/catalogues/{quote(cat_id, safe='')}/{what}.{fmt}"
    return f"{path}?{query}" if query else path


@router.get("/catalogues/{catalogue_id}/findings", response_class=HTMLResponse)
def findings_screen(request: Request, catalogue_id: str, store: StoreDep) -> Response:
    """Findings list: filters, sort, pages, exports."""
    if (clean := blanks_dropped(request)) is not None:
        return clean
    state = ViewState.from_query(request.query_params)
    return _render(request, "findings.html", **findings_context(store, catalogue_id, state),
                   who=who(request))


def diagrams_context(store: Store, cat_id: str, state: ViewState) -> dict[str, Any]:
    """Distributions and the other diagrams: one plotly figure from the stored aggregates."""
    cat_dir = store.ready_dir(cat_id)
    context = diagram_context(cat_id, queries.aggregates(cat_dir), state, cat_url)
    marks = drawn_page(context["drawn"], state, lambda s: cat_url(cat_id, "diagrams", state=s))
    decided = counts_by(cat_dir, decisions_of(store, cat_id)[1], "body",
                        [m["body"] for m in marks["items"] if m["body"] is not None])
    selection = {"diagram": context["diagram"], "label": context["label"],
                 "field": context["field"], "findings": cat_url(cat_id, "findings"),
                 "bodies": cat_url(cat_id, "bodies")}
    rules = registry.get(context["diagram"]).rules
    return {**context, "screen": "diagrams", "catalogue": store.get(cat_id).to_json(),
            "selection": selection, "state": state, "units_menu": False,
            "drawn": [{**m, "decisions": decided.get(m["body"] or "")} for m in marks["items"]],
            "drawn_page": marks, "drawn_findings_href": cat_url(
                cat_id, "findings", state=ViewState(rule=rules)) if rules else None,
            "query": state.to_query(), "default_query": f"diagram={context['diagram']}",
            "json_url": f"/api/catalogues/{quote(cat_id, safe='')}/aggregates"
                        f"?diagram={quote(context['diagram'], safe='')}"}


@router.get("/catalogues/{catalogue_id}/diagrams", response_class=HTMLResponse)
def diagrams_screen(request: Request, catalogue_id: str, store: StoreDep) -> HTMLResponse:
    """A diagram chosen by ``diagram=`` (a key of the diagram registry; density by default)."""
    state = ViewState.from_query(request.query_params)
    return _render(request, "diagrams.html", **diagrams_context(store, catalogue_id, state))


def body_context(store: Store, cat_id: str, body_id: str, asked: ViewState | None = None
                 ) -> dict[str, Any]:
    """Body: every field (in display units, SI on hover, and as given), derived quantities that
    apply, findings, its system drawn."""
    cat_dir = store.ready_dir(cat_id)
    manifest = store.get(cat_id)
    detail = queries.body_detail(cat_dir, body_id, manifest.mapping,
                                 decisions_of(store, cat_id)[1])
    state = (asked or ViewState()).with_(body=body_id)
    findings = [finding_shown(f, state.display) for f in detail["findings"]]
    extras = body_extras(detail, manifest.mapping, state.display)
    parent = next((f["value"] for f in detail["fields"] if f["field"] == "parent"), None)
    parent_name = (detail["system"]["parent"] or {}).get("name") if parent else None
    return {"screen": "body", "catalogue": manifest.to_json(), "state": state,
            "body": {**detail, "findings": findings}, "parent_name": parent_name,
            "query": state.to_query(), "default_query": state.to_query(),
            "json_url": f"/api/catalogues/{quote(cat_id, safe='')}/bodies/"
                        f"{quote(body_id, safe='')}", **extras,
            "decide_url": f"/api/catalogues/{quote(cat_id, safe='')}/decisions"}


@router.get("/catalogues/{catalogue_id}/bodies/{body_id:path}", response_class=HTMLResponse)
def body_screen(request: Request, catalogue_id: str, body_id: str,
                store: StoreDep) -> HTMLResponse:
    """One body and its system."""
    state = ViewState.from_query(request.query_params)
    return _render(request, "body.html", **body_context(store, catalogue_id, body_id, state),
                   who=who(request))


def _view_context(store: Store, view: SavedView) -> tuple[str, dict[str, Any], str]:
    """The template, context and live address of the screen a saved view encodes: a body, a
    diagram, the findings list (any other query), else the overview."""
    state = ViewState.from_query(view.query)
    cat_id, query = view.catalogue, view.query.lstrip("?")
    if state.body:
        return ("body.html", body_context(store, cat_id, state.body, state),
                cat_url(cat_id, "bodies", state.body))
    if state.screen in SCREENS:
        template, build, parts = SCREENS[state.screen]
        return template, build(store, cat_id, state), f"{cat_url(cat_id, *parts)}?{query}"
    if state.diagram:
        return ("diagrams.html", diagrams_context(store, cat_id, state),
                f"{cat_url(cat_id, 'diagrams')}?{query}")
    if query:
        return ("findings.html", findings_context(store, cat_id, state),
                f"{cat_url(cat_id, 'findings')}?{query}")
    context = {**overview_context(store, store.get(cat_id), state), "families_all": FAMILIES}
    return "overview.html", context, cat_url(cat_id)


# Screens a saved view opens by its ``screen=`` (set when it was saved there): the template,
# the context builder (store, catalogue, state) and the screen's path below the catalogue.
SCREENS: dict[str, tuple[str, Any, tuple[str, ...]]] = {}


@router.get("/v/{slug}", response_class=HTMLResponse)
def saved_view_screen(request: Request, slug: str, store: StoreDep) -> HTMLResponse:
    """Saved views: the title and note above the screen the saved query encodes."""
    view = store.get_view(slug)
    template, context, live = _view_context(store, view)
    context.update(saved_view=view, live_url=live, json_url=f"/api/views/{quote(slug, safe='')}")
    return _render(request, template, **context)


@router.get("/catalogues/{catalogue_id}/report.html", response_class=HTMLResponse)
def report_download(request: Request, catalogue_id: str, store: StoreDep) -> HTMLResponse:
    """Download report: the current view as one self-contained HTML file."""
    state = ViewState.from_query(request.query_params)
    cat_dir = store.ready_dir(catalogue_id)
    manifest = store.get(catalogue_id)
    aggs = queries.aggregates(cat_dir)
    figures = report.figures_for_view(aggs, state)
    decisions = decisions_of(store, catalogue_id)[1]
    page = queries.findings_page(cat_dir, state.with_(limit=min(state.limit * 10, 500)),
                                 decisions)
    body = report.build_report(templates.env, manifest.to_json(), state, aggs, figures, page,
                               triage_counts(cat_dir, decisions))
    name = f"bodycensus-{catalogue_id}-report.html"
    return HTMLResponse(body, headers={"Content-Disposition": f'attachment; filename="{name}"'})



def systems_context(store: Store, cat_id: str, state: ViewState) -> dict[str, Any]:
    """Systems: one server-side page of the systems, most serious first, filtered by worst."""
    cat_dir = store.ready_dir(cat_id)
    page = queries.systems_page(cat_dir, state)
    names = names_for(cat_dir, [i for item in page["items"]
                                for i in (item["primary"], item["worst_body"]) if i])
    decided = counts_by(cat_dir, decisions_of(store, cat_id)[1], "system",
                        [item["system"] for item in page["items"]])
    query = state.with_(sort=ViewState.sort).to_query()
    prev_state = state.with_(offset=max(0, state.offset - state.limit))
    next_state = state.with_(offset=state.offset + state.limit)
    items = [{**item, "href": cat_url(cat_id, "systems", item["system"]),
              "primary_name": names.get(item["primary"] or ""),
              "worst_name": names.get(item["worst_body"] or ""),
              "decisions": decided.get(item["system"]),
              "worst_href": (cat_url(cat_id, "bodies", item["worst_body"])
                             if item["worst_body"] is not None else None),
              "primary_href": (cat_url(cat_id, "bodies", item["primary"])
                               if item["primary"] is not None else None)}
             for item in page["items"]]
    return {"screen": "systems", "catalogue": store.get(cat_id).to_json(), "state": state,
            "page": {**page, "items": items}, "query": query,
            "json_url": f"/api/catalogues/{quote(cat_id, safe='')}/systems" + (f"?{query}" if query
                                                                         else ""),
            "prev_href": cat_url(cat_id, "systems", state=prev_state) if state.offset else None,
            "next_href": (cat_url(cat_id, "systems", state=next_state)
                          if state.offset + state.limit < page["total"] else None)}


@router.get("/catalogues/{catalogue_id}/systems", response_class=HTMLResponse)
def systems_screen(request: Request, catalogue_id: str, store: StoreDep) -> Response:
    """Systems list: worst severity first, with a filter by worst severity and pages."""
    if (clean := blanks_dropped(request)) is not None:
        return clean
    state = ViewState.from_query(request.query_params)
    return _render(request, "systems.html", **systems_context(store, catalogue_id, state))


@router.get("/catalogues/{catalogue_id}/systems/{system:path}", response_class=HTMLResponse)
def system_screen(request: Request, catalogue_id: str, system: str,
                  store: StoreDep) -> HTMLResponse:
    """One system: its bodies as an indented tree, each with its worst severity, masses,
    radii and orbits in display units (SI on hover), and its findings per rule, each group
    with its triage decision; its JSON twin is linked."""
    state = ViewState.from_query(request.query_params)
    cat_dir = store.ready_dir(catalogue_id)
    detail = queries.system_detail(cat_dir, system)
    bodies = [{**row_shown(dict(row), ("mass", "radius", "semi_major_axis"), state.display),
               "href": cat_url(catalogue_id, "bodies", row["id"])} for row in detail["bodies"]]
    by_rule = system_groups(cat_dir, decisions_of(store, catalogue_id)[1], system)
    query = state.to_query()
    return _render(request, "system.html", screen="systems", system={**detail, "bodies": bodies},
                   catalogue=store.get(catalogue_id).to_json(), groups=by_rule, who=who(request),
                   decide_url=f"/api/catalogues/{quote(catalogue_id, safe='')}/decisions",
                   state=state, query=query,
                   json_url=f"/api/catalogues/{quote(catalogue_id, safe='')}/systems/"
                            f"{quote(system, safe='')}")
