"""Compare two catalogues: the Compare screen (pick two, see what changed) and its JSON twin
``GET /api/compare``; both read ``screens.compare``."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Annotated, Any

from fastapi import APIRouter, Query, Request
from fastapi.responses import HTMLResponse
from starlette.concurrency import run_in_threadpool

from bodycensus.dashboard.deps import StoreDep
from bodycensus.dashboard.routes.pages import _render
from bodycensus.dashboard.screens.compare import compare_context, comparison

api = APIRouter(prefix="/api", tags=["compare"])
router = APIRouter(include_in_schema=False)
Id = Annotated[str, Query(min_length=4, max_length=40, pattern=r"^[A-Za-z0-9_-]+$")]
Choice = Annotated[str | None, Query(max_length=200)]


@api.get("/compare")
async def compare_catalogues(old: Id, new: Id, store: StoreDep) -> Mapping[str, Any]:
    """Two ready catalogues compared: bodies added, removed and changed (by id); findings new,
    fixed and unchanged (by body and rule) per severity and per rule and label; a two-sample
    Kolmogorov-Smirnov test per label and field (one value per system, Benjamini-Hochberg
    adjusted, with the effect in pooled standard deviations and both histograms); artefacts
    that appeared or vanished."""
    return await run_in_threadpool(comparison, store, old, new)


@router.get("/compare", response_class=HTMLResponse)
async def compare_screen(request: Request, store: StoreDep, old: Choice = None,
                         new: Choice = None, label: Choice = None,
                         field: Choice = None) -> HTMLResponse:
    """Compare: pick two catalogues; their differences, and one label's field drawn twice."""
    context: dict[str, Any] = await run_in_threadpool(
        compare_context, store, old or None, new or None, label, field)
    return _render(request, "compare.html", **context)
