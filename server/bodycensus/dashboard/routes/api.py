"""The JSON API under ``/api``: thin routes over the store, the jobs and the query functions."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import asdict
from pathlib import Path
from typing import Annotated, Any, Literal, cast
from urllib.parse import quote

from fastapi import APIRouter, Depends, Query, Request, Response
from fastapi.responses import FileResponse
from starlette.background import BackgroundTask
from starlette.concurrency import run_in_threadpool

from bodycensus.dashboard.deps import JobsDep, PresetsDep, ReadyDir, SettingsDep, StoreDep
from bodycensus.dashboard.intake.jobs import Overrides
from bodycensus.dashboard.intake.uploads import FIELD, Upload, receive_upload
from bodycensus.dashboard.models import (
    BodyOut,
    CatalogueList,
    CatalogueOut,
    DiagramOut,
    ErrorOut,
    FindingsPage,
    MappingIn,
    Overview,
    UploadAccepted,
    ViewIn,
    ViewList,
    ViewOut,
)
from bodycensus.dashboard.screens import groups, queries, shapes
from bodycensus.dashboard.screens.bodies import bodies_page, export_bodies
from bodycensus.dashboard.screens.search import search_bodies
from bodycensus.dashboard.screens.triage import decisions_of
from bodycensus.dashboard.screens.viewstate import MAX_LIMIT, ViewState
from bodycensus.diagrams import registry
from bodycensus.errors import BadInput, Conflict
from bodycensus.input.sniff import sniff
from bodycensus.storage.manifest import Manifest
from bodycensus.storage.store import SavedView, Store, now

_ERRORS: dict[int | str, dict[str, type[ErrorOut]]] = {
    code: {"model": ErrorOut} for code in (400, 404, 409, 413, 415, 421, 422, 507)
}
router = APIRouter(prefix="/api", tags=["api"], responses=_ERRORS)

_UPLOAD_BODY = {"requestBody": {"required": True, "content": {"multipart/form-data": {"schema": {
    "type": "object", "required": [FIELD],
    "properties": {FIELD: {"type": "string", "format": "binary",
                           "description": "CSV/TSV/NDJSON/Parquet, optionally .gz or .zst"}},
}}}}}


def _out(manifest: Manifest) -> CatalogueOut:
    """The API form of a manifest."""
    return CatalogueOut(**manifest.to_json(), url=f"/catalogues/{manifest.id}")


def _view_out(view: SavedView) -> ViewOut:
    """The API form of a saved view."""
    return ViewOut(**asdict(view), url=view.url)


async def _open_upload(store: Store, up: Upload, max_columns: int, auto: bool) -> Manifest:
    """Look at the upload; refuse it (nothing kept) if it cannot be read at all."""
    try:
        found = await run_in_threadpool(sniff, up.path, up.name, max_columns)
        if auto and found is not None and "id" not in found.mapping.choices:
            raise BadInput(f"{up.name}: no column was recognised as the body id; upload without "
                           "auto=1 to choose it, or add an 'id' column", 422)
    except BaseException:
        store.discard(up.id)
        raise
    manifest = Manifest(id=up.id, name=up.name, status="mapping", created=now(),
                        source=up.suffix, proposal=found.to_json() if found else None)
    return store.open_upload(manifest)


@router.post("/catalogues", status_code=202, response_model=UploadAccepted,
             openapi_extra=_UPLOAD_BODY)
async def upload_catalogue(request: Request, store: StoreDep, jobs: JobsDep,
                           settings: SettingsDep, presets: PresetsDep,
                           auto: bool = False) -> UploadAccepted:
    """Upload a catalogue (multipart field ``file``), streamed to disk. The run starts at once
    with the mapping preset saved for the file's header, if any, else unless the mapping is
    unsure (status ``mapping``); ``auto=1`` skips the mapping step."""
    up = await receive_upload(request, store, settings.max_upload_bytes)
    manifest = await _open_upload(store, up, settings.max_columns, auto)
    preset = presets.find(manifest.proposal["columns"]) if manifest.proposal else None
    overrides = _preset_overrides(preset, manifest)
    if overrides is not None and preset is not None:
        store.update(up.id, preset=f"saved {preset.saved} from {preset.source}")
        manifest = await run_in_threadpool(jobs.start, up.id, overrides)
    elif auto or not (manifest.proposal and manifest.proposal["reasons"]):
        manifest = await run_in_threadpool(jobs.start, up.id, Overrides())
    return UploadAccepted(id=up.id, status=manifest.status, url=f"/catalogues/{up.id}")


def _preset_overrides(preset: Any, manifest: Manifest) -> Overrides | None:
    """The preset's choices as overrides, when they still fit the file (else None: the person
    maps it)."""
    if preset is None or manifest.proposal is None:
        return None
    choices = preset.choices
    try:
        return Overrides(dict(choices["map"]), dict(choices["units"]),
                         dict(choices["families"]), dict(choices.get("hosts", {})),
                         dict(choices.get("host_units", {})),
                         tuple(choices.get("nulls", []))).checked(manifest.proposal["columns"])
    except BadInput:
        return None


@router.get("/catalogues", response_model=CatalogueList)
def list_catalogues(store: StoreDep) -> CatalogueList:
    """Every catalogue, newest first, without summaries or proposals."""
    return CatalogueList(items=[_out(m).model_copy(update={"summary": None, "proposal": None})
                                for m in store.list()])


@router.get("/catalogues/{catalogue_id}", response_model=CatalogueOut)
def get_catalogue(catalogue_id: str, store: StoreDep) -> CatalogueOut:
    """A catalogue's status, progress, rows, error, mapping (or proposal) and summary."""
    return _out(store.get(catalogue_id))


@router.post("/catalogues/{catalogue_id}/mapping", status_code=202, response_model=CatalogueOut)
def confirm_mapping(catalogue_id: str, choice: MappingIn, store: StoreDep,
                    jobs: JobsDep, presets: PresetsDep) -> CatalogueOut:
    """Confirm or correct the mapping of a catalogue in status ``mapping`` and start its run;
    with ``save_preset``, keep the choices for the next file with the same header."""
    manifest = store.get(catalogue_id)
    if manifest.status != "mapping":
        raise Conflict(f"catalogue '{catalogue_id}' is {manifest.status}; only a catalogue in "
                       "status mapping takes a mapping")
    columns = manifest.proposal["columns"] if manifest.proposal else []
    overrides = Overrides(choice.map, choice.units, choice.families, choice.hosts,
                          choice.host_units, tuple(choice.nulls))
    if columns:
        overrides = overrides.checked(columns)
    started = jobs.start(catalogue_id, overrides)
    if choice.save_preset and columns:
        presets.save(columns, overrides.to_record(), manifest.name)
    return _out(started)


@router.delete("/catalogues/{catalogue_id}", status_code=204)
def delete_catalogue(catalogue_id: str, store: StoreDep) -> Response:
    """Delete a catalogue and its saved views (not while it is being ingested); the decisions
    of its catalogue key stay for the next upload."""
    store.delete(catalogue_id)
    return Response(status_code=204)


def _state(request: Request) -> ViewState:
    """The view state of the request's query string (the one parser)."""
    return ViewState.from_query(request.query_params)


FilterQuery = Annotated[list[str] | None, Query(description="repeat the key for several")]


REGION_OF = "the diagram a region was drawn on (a key of GET /api/diagrams)"
REGION = "a box in the diagram's coordinates: x0,x1 or x0,x1,y0,y1"
LASSO = "a lasso in the diagram's coordinates: x y;x y;..."


def findings_view(severity: FilterQuery = None, rule: FilterQuery = None,
                  label: FilterQuery = None, family: FilterQuery = None,
                  min_value: float | None = None, max_value: float | None = None,
                  min_margin: float | None = None, max_margin: float | None = None,
                  sort: str = "severity", limit: Annotated[int, Query(ge=1, le=MAX_LIMIT)] = 50,
                  offset: Annotated[int, Query(ge=0)] = 0,
                  region_of: Annotated[str | None, Query(description=REGION_OF)] = None,
                  region: Annotated[str | None, Query(description=REGION)] = None,
                  lasso: Annotated[str | None, Query(description=LASSO)] = None,
                  field: Annotated[str | None, Query(description="the field of a "
                                                     "distributions region")] = None
                  ) -> ViewState:
    """The findings list's query parameters (declared, so OpenAPI documents them), read by the
    view state's one parser, which checks what the types alone do not (severities, sort keys,
    finite numbers, lengths, regions)."""
    given = {"severity": severity, "rule": rule, "label": label, "family": family,
             "min_value": min_value, "max_value": max_value, "min_margin": min_margin,
             "max_margin": max_margin, "sort": sort, "limit": limit, "offset": offset,
             "region_of": region_of, "region": region, "lasso": lasso, "field": field}
    return ViewState.from_query(given)


FindingsView = Annotated[ViewState, Depends(findings_view)]


@router.get("/catalogues/{catalogue_id}/findings", response_model=FindingsPage)
def list_findings(catalogue_id: str, cat_dir: ReadyDir, view: FindingsView, store: StoreDep,
                  undecided: bool = False) -> shapes.FindingsPage:
    """Findings filtered by severity (error, impossible, unstable, suspect, note), rule, label,
    family and value/margin ranges, and to those no triage decision covers (``undecided=1``);
    sorted by ``sort`` (a column, '-' for descending); paginated by ``limit`` and ``offset``.
    Each finding carries the decision that covers it."""
    return queries.findings_page(cat_dir, view.with_(undecided=undecided),
                                 decisions_of(store, catalogue_id)[1])


def _export(request: Request, store: Store, cat_dir: Path, fmt: Literal["csv", "parquet"],
            what: Literal["findings", "bodies"] = "findings") -> FileResponse:
    """Write the filtered findings (or bodies) to a scratch file and send it, removing it
    afterwards."""
    dest = store.scratch(f".{fmt}")
    try:
        if what == "findings":
            queries.export_findings(cat_dir, _state(request), fmt, dest,
                                    decisions_of(store, cat_dir.name)[1])
        else:
            export_bodies(cat_dir, _state(request), fmt, dest)
    except BaseException:
        dest.unlink(missing_ok=True)
        raise
    media = "text/csv; charset=utf-8" if fmt == "csv" else "application/vnd.apache.parquet"
    return FileResponse(dest, media_type=media, filename=f"{cat_dir.name}-{what}.{fmt}",
                        background=BackgroundTask(dest.unlink, missing_ok=True))


@router.get("/catalogues/{catalogue_id}/findings.csv", response_class=FileResponse)
def export_csv(request: Request, cat_dir: ReadyDir, store: StoreDep) -> FileResponse:
    """Every filtered finding as CSV (cells that start like a formula are prefixed with ')."""
    return _export(request, store, cat_dir, "csv")


@router.get("/catalogues/{catalogue_id}/findings.parquet", response_class=FileResponse)
def export_parquet(request: Request, cat_dir: ReadyDir, store: StoreDep) -> FileResponse:
    """Every filtered finding as Parquet."""
    return _export(request, store, cat_dir, "parquet")


@router.get("/catalogues/{catalogue_id}/bodies")
def list_bodies(cat_dir: ReadyDir, request: Request) -> Mapping[str, Any]:
    """Every body (not only flagged ones), filtered like the findings: a body is listed when one
    of its findings passes ``severity``, ``rule`` and the value and margin ranges, and by its
    own ``label``, ``family`` and a diagram's region; ordered by ``order`` (a column, '-' for
    descending; the file's order by default), with its worst severity and findings counted."""
    return cast(Mapping[str, Any], bodies_page(cat_dir, _state(request)))


@router.get("/catalogues/{catalogue_id}/bodies.csv", response_class=FileResponse)
def export_bodies_csv(request: Request, cat_dir: ReadyDir, store: StoreDep) -> FileResponse:
    """Every filtered body as CSV (SI values; id, name, system and parent; worst severity)."""
    return _export(request, store, cat_dir, "csv", "bodies")


@router.get("/catalogues/{catalogue_id}/bodies.parquet", response_class=FileResponse)
def export_bodies_parquet(request: Request, cat_dir: ReadyDir, store: StoreDep) -> FileResponse:
    """Every filtered body as Parquet."""
    return _export(request, store, cat_dir, "parquet", "bodies")


@router.get("/catalogues/{catalogue_id}/findings/groups")
def list_groups(cat_dir: ReadyDir, request: Request) -> Sequence[Mapping[str, Any]]:
    """Findings grouped by rule and label, most serious first: counts per severity, bodies,
    the worst margin and three example bodies (filtered by severity, rule, label, family)."""
    return cast(Sequence[Mapping[str, Any]], groups.groups(cat_dir, _state(request)))


@router.get("/catalogues/{catalogue_id}/search")
def search(cat_dir: ReadyDir, q: Annotated[str, Query(min_length=1, max_length=200)]
           ) -> Mapping[str, Any]:
    """Bodies whose id, name or a later word of the name starts with ``q`` (any case), exact
    ids first, each with label, system, parent and worst severity; at most 50."""
    return cast(Mapping[str, Any], search_bodies(cat_dir, q))


@router.get("/catalogues/{catalogue_id}/systems/{system:path}")
def get_system(cat_dir: ReadyDir, system: str) -> Mapping[str, Any]:
    """One system's bodies in tree order (each with depth, children and worst severity): the
    System page's data."""
    return cast(Mapping[str, Any], queries.system_detail(cat_dir, system))


@router.get("/catalogues/{catalogue_id}/bodies/{body_id:path}", response_model=BodyOut)
def get_body(catalogue_id: str, body_id: str, cat_dir: ReadyDir, store: StoreDep
             ) -> shapes.BodyDetail:
    """One body: fields in SI and as given, derived values, findings (with their decisions),
    parent/siblings/children."""
    return queries.body_detail(cat_dir, body_id, store.get(catalogue_id).mapping,
                               decisions_of(store, catalogue_id)[1])


@router.get("/catalogues/{catalogue_id}/overview", response_model=Overview)
def get_overview(catalogue_id: str, cat_dir: ReadyDir, store: StoreDep) -> shapes.Overview:
    """Summary counts, rule coverage and artefacts of a ready catalogue."""
    return queries.overview(cat_dir, store.get(catalogue_id).to_json())


@router.get("/catalogues/{catalogue_id}/artefacts")
def get_artefacts(cat_dir: ReadyDir, offset: int = Query(0, ge=0, le=10**12),
                  limit: int = Query(MAX_LIMIT, ge=1, le=MAX_LIMIT)) -> Sequence[Mapping[str, Any]]:
    """Distribution artefacts: hard cutoffs, gaps and spikes, per label or family and field,
    strongest evidence first; ``limit`` of them (at most 1000) from ``offset``."""
    return queries.artefacts(cat_dir, offset, limit)


@router.get("/catalogues/{catalogue_id}/coverage")
def get_coverage(cat_dir: ReadyDir) -> Sequence[Mapping[str, Any]]:
    """Which rules ran on how many bodies, and why the others were skipped."""
    return queries.coverage(cat_dir)


@router.get("/catalogues/{catalogue_id}/systems")
def list_systems(request: Request, cat_dir: ReadyDir, severity: FilterQuery = None,
                 limit: Annotated[int, Query(ge=1, le=MAX_LIMIT)] = 50,
                 offset: Annotated[int, Query(ge=0)] = 0) -> Mapping[str, Any]:
    """Systems, most serious first: bodies, primary, findings per severity, worst severity and
    body; filtered by worst ``severity``; paginated by ``limit`` and ``offset``."""
    return queries.systems_page(cat_dir, _state(request))


@router.get("/catalogues/{catalogue_id}/aggregates")
def get_aggregates(catalogue_id: str, cat_dir: ReadyDir,
                   diagram: Annotated[list[str] | None, Query()] = None
                   ) -> Mapping[str, Any]:
    """Binned counts for the overview and, under ``diagrams``, for the diagrams asked by key
    (``diagram=``, repeatable; the browser never gets raw rows). Without ``diagram`` the
    diagrams are left out and ``diagram_urls`` gives each one's address: every diagram at once
    is ~4 MB of JSON at 10M bodies, past the ~2 MB any one answer may carry."""
    aggs = queries.aggregates(cat_dir)
    rest = {k: v for k, v in aggs.items() if k != "diagrams"}
    if not diagram:
        base = f"/api/catalogues/{quote(catalogue_id, safe='')}/aggregates?diagram="
        return {**rest, "diagram_urls": {key: base + key for key in aggs["diagrams"]}}
    unknown = [key for key in diagram if key not in aggs["diagrams"]]
    if unknown:
        raise BadInput(f"no diagram {unknown[0][:64]!r}; use one of "
                       f"{', '.join(aggs['diagrams'])}")
    return {**rest, "diagrams": {key: aggs["diagrams"][key] for key in diagram}}


@router.get("/diagrams", response_model=list[DiagramOut])
def list_diagrams() -> list[DiagramOut]:
    """Every diagram, in the chooser's order: its key (``diagram=`` in a view's address and its
    place in the aggregates), title, caption and the rules whose findings it draws on top."""
    return [DiagramOut(key=d.key, title=d.title, caption=d.caption, rules=list(d.rules))
            for d in registry.DIAGRAMS]


@router.post("/views", status_code=201, response_model=ViewOut)
def save_view(view: ViewIn, store: StoreDep) -> ViewOut:
    """Save a view (catalogue + its URL query + title + note) under a short slug."""
    query = ViewState.from_query(view.query).to_query()
    return _view_out(store.save_view(view.catalogue, query, view.title.strip(), view.note))


@router.get("/views/{slug}", response_model=ViewOut)
def get_view(slug: str, store: StoreDep) -> ViewOut:
    """A saved view."""
    return _view_out(store.get_view(slug))


@router.get("/catalogues/{catalogue_id}/views", response_model=ViewList)
def list_views(catalogue_id: str, store: StoreDep) -> ViewList:
    """The saved views of a catalogue, newest first."""
    store.get(catalogue_id)
    return ViewList(items=[_view_out(v) for v in store.list_views(catalogue_id)])

