"""The Compare screen's data: two ready catalogues compared by ``engines.compare``, kept in
``comparisons/`` of the data directory (a ready catalogue never changes, so a comparison of two
of them stays true), and the overlaid histograms of one label and field.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any, cast
from urllib.parse import urlencode

from bodycensus.diagrams import shift
from bodycensus.engines.compare import Comparison, compare_runs
from bodycensus.engines.shifts import ShiftRow
from bodycensus.errors import BadInput
from bodycensus.storage.store import Store, write_json_atomic

FOLDER = "comparisons"
VERSION = 1  # of the stored comparison; another version is computed again


def compare_url(old: str | None, new: str | None, label: str | None = None,
                field: str | None = None, api: bool = False) -> str:
    """The address of a comparison (the screen, or its JSON twin with ``api``)."""
    pairs = [(k, v) for k, v in (("old", old), ("new", new), ("label", label), ("field", field))
             if v]
    path = "/api/compare" if api else "/compare"
    return f"{path}?{urlencode(pairs)}" if pairs else path


def comparison(store: Store, old: str, new: str) -> Comparison:
    """The comparison of two ready catalogues: stored, else computed now and stored."""
    if old == new:
        raise BadInput("choose two different catalogues to compare")
    old_dir, new_dir = store.ready_dir(old), store.ready_dir(new)
    path = comparison_file(store, old, new)
    if path.is_file():
        stored = json.loads(path.read_text(encoding="utf-8"))
        if stored.get("version") == VERSION:
            return cast(Comparison, stored["comparison"])
    names = (store.get(old).name, store.get(new).name)
    result = compare_runs(old_dir, new_dir, names)
    path.parent.mkdir(exist_ok=True)
    write_json_atomic(path, {"version": VERSION, "comparison": result})
    return result


def chosen_shift(result: Comparison, label: str | None, field: str | None) -> ShiftRow | None:
    """The shift row the screen draws: the one asked for, else the most shifted."""
    rows = result["shifts"]
    asked = [r for r in rows if r["label"] == label and r["field"] == field]
    return next(iter(asked or rows), None)


def compare_context(store: Store, old: str | None, new: str | None, label: str | None,
                    field: str | None) -> dict[str, Any]:
    """The Compare screen: the two pickers, and when both are chosen the comparison, the links
    of each shift row and the figure of the chosen one."""
    ready = [m.to_json() for m in store.list() if m.status == "ready"]
    context: dict[str, Any] = {"screen": "compare", "ready": ready, "old": old, "new": new,
                               "json_url": compare_url(old, new, api=True) if old and new
                               else None, "result": None}
    if not (old and new):
        return context
    result = comparison(store, old, new)
    row = chosen_shift(result, label, field)
    shifts = [{**r, "href": compare_url(old, new, r["label"], r["field"]) + "#shift-figure",
               "chosen": r is row} for r in result["shifts"]]
    figure = shift.figure(row, result["old"]["name"], result["new"]["name"])
    return {**context, "result": result, "shifts": shifts, "row": row, "figure": figure,
            "query": urlencode([("old", old), ("new", new)])}


def comparison_file(store: Store, old: str, new: str) -> Path:
    """Where the comparison of ``old`` and ``new`` is kept."""
    return store.data_dir / FOLDER / f"{old}--{new}.json"
