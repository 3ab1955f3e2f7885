"""The list screens beyond Findings: the Bodies list (every body, the same filters, an order,
exports), findings grouped by rule and label, and the search by id or name. Each renders the
data its JSON twin returns; state lives in the URL (``ViewState``)."""

from __future__ import annotations

from typing import Any
from urllib.parse import quote

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from bodycensus.dashboard.deps import StoreDep
from bodycensus.dashboard.routes.page_tools import blanks_dropped, rule_option
from bodycensus.dashboard.routes.pages import (
    SCREENS,
    _export_url,
    _group_state,
    _render,
    cat_url,
    group_rows,
)
from bodycensus.dashboard.screens import groups, queries
from bodycensus.dashboard.screens.bodies import bodies_page
from bodycensus.dashboard.screens.page_context import rules_summary
from bodycensus.dashboard.screens.regions import describe
from bodycensus.dashboard.screens.search import search_bodies
from bodycensus.dashboard.screens.shown import row_shown
from bodycensus.dashboard.screens.viewstate import ORDER_KEYS, ViewState
from bodycensus.storage.store import Store

router = APIRouter(include_in_schema=False)
_ORDER_WORDS = {"_row": "row in the file", "id": "id", "worst": "most serious finding",
                "findings": "number of findings", "semi_major_axis": "semi-major axis"}


def order_groups() -> list[tuple[str, list[tuple[str, str]]]]:
    """The Bodies list's orders, grouped: the file's own, then a column either way."""
    columns = [k for k in ORDER_KEYS if k != "_row"]
    word = {k: _ORDER_WORDS.get(k, k) for k in ORDER_KEYS}
    worst_first = [("worst", "most serious finding first")]
    return [("The file's order", [("_row", "row in the file"), ("-_row", "last row first")]),
            ("Seriousness", worst_first + [("-findings", "most findings first")]),
            ("A column, smallest or A first", [(k, f"{word[k]}, smallest or A first")
                                               for k in columns if k not in ("worst",)]),
            ("A column, largest or Z first", [(f"-{k}", f"{word[k]}, largest or Z first")
                                              for k in columns
                                              if k not in ("worst", "findings")])]


def bodies_context(store: Store, cat_id: str, state: ViewState) -> dict[str, Any]:
    """Bodies: one page of every body passing the filters, in the chosen order and units."""
    cat_dir = store.ready_dir(cat_id)
    page = bodies_page(cat_dir, state)
    aggs = queries.aggregates(cat_dir)
    query = state.to_query()
    items = [{**row_shown(r, ("mass", "radius", "semi_major_axis"), state.display),
              "href": cat_url(cat_id, "bodies", r["id"]) if r["id"] is not None else None,
              "system_href": cat_url(cat_id, "systems", r["system"]) if r.get("system")
              else None} for r in page["items"]]
    prev_state = state.with_(offset=max(0, state.offset - state.limit))
    next_state = state.with_(offset=state.offset + state.limit)
    return {
        "screen": "bodies", "catalogue": store.get(cat_id).to_json(), "state": state,
        "page": {**page, "items": items}, "query": query,
        "default_query": "screen=bodies",
        "json_url": f"/api/catalogues/{quote(cat_id, safe='')}/bodies"
                    + (f"?{query}" if query else ""),
        "rule_options": [(r["rule"], rule_option(r)) for r in
                         sorted(rules_summary(aggs["rules"]), key=lambda r: r["rule"])],
        "label_options": sorted(lb["label"] for lb in aggs["labels"] if lb["label"] is not None),
        "family_options": sorted(f["family"] for f in aggs["families"] if f["family"]),
        "order_groups": order_groups(), "region": describe(state),
        "prev_href": cat_url(cat_id, "bodies", state=prev_state) if state.offset else None,
        "next_href": (cat_url(cat_id, "bodies", state=next_state)
                      if state.offset + state.limit < page["total"] else None),
        "export_csv": _export_url(cat_id, "bodies", "csv", state),
        "export_parquet": _export_url(cat_id, "bodies", "parquet", state),
        "findings_href": cat_url(cat_id, "findings", state=state.with_(order="_row")),
    }


@router.get("/catalogues/{catalogue_id}/bodies", response_class=HTMLResponse)
def bodies_screen(request: Request, catalogue_id: str, store: StoreDep) -> Response:
    """Bodies list: every body, with the Findings list's filters, an order, pages, exports."""
    if (clean := blanks_dropped(request)) is not None:
        return clean
    state = ViewState.from_query(request.query_params)
    return _render(request, "bodies.html", **bodies_context(store, catalogue_id, state))


def groups_context(store: Store, cat_id: str, state: ViewState) -> dict[str, Any]:
    """Findings by rule and label: each group's counts by severity, worst margin and three
    example bodies, every cell a link to the filtered list."""
    cat_dir = store.ready_dir(cat_id)
    found = groups.groups(cat_dir, state)
    aggs = queries.aggregates(cat_dir)
    query = state.to_query()
    return {
        "screen": "findings", "catalogue": store.get(cat_id).to_json(), "state": state,
        "groups": group_rows(cat_id, found), "query": query, "default_query": "screen=groups",
        "screen_name": "groups",
        "json_url": f"/api/catalogues/{quote(cat_id, safe='')}/findings/groups"
                    + (f"?{query}" if query else ""),
        "rule_options": [(r["rule"], rule_option(r)) for r in
                         sorted(rules_summary(aggs["rules"]), key=lambda r: r["rule"])],
        "label_options": sorted(lb["label"] for lb in aggs["labels"] if lb["label"] is not None),
        "family_options": sorted(f["family"] for f in aggs["families"] if f["family"]),
        "list_href": cat_url(cat_id, "findings", state=_group_state(state)),
        "total": sum(g["findings"] for g in found),
    }


@router.get("/catalogues/{catalogue_id}/findings/groups", response_class=HTMLResponse)
def groups_screen(request: Request, catalogue_id: str, store: StoreDep) -> Response:
    """Findings grouped by rule and label, with the severity, rule, label and family filters."""
    if (clean := blanks_dropped(request)) is not None:
        return clean
    state = ViewState.from_query(request.query_params)
    return _render(request, "groups.html", **groups_context(store, catalogue_id, state))


def search_context(store: Store, cat_id: str, state: ViewState) -> dict[str, Any]:
    """Search results: bodies whose id or name starts with the text, exact ids first."""
    cat_dir = store.ready_dir(cat_id)
    found = search_bodies(cat_dir, state.q or "")
    items = [{**r, "href": cat_url(cat_id, "bodies", r["id"]),
              "system_href": cat_url(cat_id, "systems", r["system"]) if r.get("system")
              else None,
              "parent_href": cat_url(cat_id, "bodies", r["parent"]) if r.get("parent") else None}
             for r in found["items"]]
    query = state.to_query()
    return {"screen": "search", "catalogue": store.get(cat_id).to_json(), "state": state,
            "results": {**found, "items": items}, "query": query,
            "default_query": "screen=search", "units_menu": False,
            "json_url": f"/api/catalogues/{quote(cat_id, safe='')}/search"
                        + (f"?{query}" if query else "")}


@router.get("/catalogues/{catalogue_id}/search", response_class=HTMLResponse)
def search_screen(request: Request, catalogue_id: str, store: StoreDep) -> Response:
    """Search by id or name; an id matched exactly, and nothing else, opens its body at once."""
    state = ViewState.from_query(request.query_params)
    context = search_context(store, catalogue_id, state)
    exact = context["results"]["exact"]
    if exact is not None and len(context["results"]["items"]) == 1:
        return RedirectResponse(cat_url(catalogue_id, "bodies", exact), status_code=303)
    return _render(request, "search.html", **context)


SCREENS.update({"bodies": ("bodies.html", bodies_context, ("bodies",)),
                "groups": ("groups.html", groups_context, ("findings", "groups")),
                "search": ("search.html", search_context, ("search",))})
