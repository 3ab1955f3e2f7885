"""Search by id or name: bodies whose id, name, or a later word of the name starts with what was
typed, read from the catalogue's name index (``storage.names``), each with its label, system,
parent and worst finding looked up for the few bodies found.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, TypedDict

from bodycensus.dashboard.screens import tables
from bodycensus.storage.names import names_of, search
from bodycensus.storage.store import json_ready

MAX_RESULTS = 50


class SearchResults(TypedDict):
    """What a search found: the text, the bodies (best matches first) and the id it names
    exactly, if one."""

    query: str
    items: list[dict[str, Any]]
    exact: str | None
    capped: bool


def search_bodies(cat_dir: Path, text: str, limit: int = MAX_RESULTS) -> SearchResults:
    """Bodies matching ``text`` by id or name, exact ids first."""
    found = search(tables.name_index(cat_dir), text, limit + 1)
    ids = found["id"].to_list()[:limit]
    rows = {r["id"]: r for r in tables.rows_of(cat_dir, ids, ["id", "label", "system",
                                                            "parent"]).to_dicts()}
    worst = tables.worst_of(cat_dir, ids)
    parents = names_of(cat_dir, [p for r in rows.values() if (p := r.get("parent"))])
    items = []
    for hit in found.head(limit).to_dicts():
        row = rows.get(hit["id"], {})
        items.append({**hit, "label": row.get("label"), "system": row.get("system"),
                      "parent": row.get("parent"), "parent_name": parents.get(row.get("parent")
                                                                              or ""),
                      "worst": worst.get(hit["id"], (None, 0))[0],
                      "findings": worst.get(hit["id"], (None, 0))[1]})
    exact = next((i["id"] for i in items if i["exact_id"]), None)
    return {"query": text, "items": json_ready(items), "exact": exact,
            "capped": found.height > limit}


def names_for(cat_dir: Path, ids: list[str]) -> dict[str, str]:
    """The names of a page's ids (systems' primaries, worst bodies), from the name index."""
    return names_of(tables.name_index(cat_dir), [i for i in ids if i])
