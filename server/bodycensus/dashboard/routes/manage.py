"""Managing catalogues: the mapping step's own page (a new upload's, or a re-run's with the
previous choices), and the JSON calls that rename, re-run or delete a catalogue and save its
mapping as a preset, without a new upload."""

from __future__ import annotations

from typing import Any
from urllib.parse import quote

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from pydantic import BaseModel, Field
from starlette.concurrency import run_in_threadpool

from bodycensus.dashboard.deps import PresetsDep, SettingsDep, StoreDep
from bodycensus.dashboard.routes.pages import _render, cat_url
from bodycensus.dashboard.screens.page_context import mapping_context
from bodycensus.errors import Conflict
from bodycensus.input.sniff import sniff
from bodycensus.storage.manifest import Manifest

router = APIRouter(include_in_schema=False)
api = APIRouter(prefix="/api", tags=["api"])


@router.get("/catalogues/{catalogue_id}/mapping", response_class=HTMLResponse)
def mapping_screen(request: Request, catalogue_id: str, store: StoreDep,
                   presets: PresetsDep) -> Response:
    """The mapping step of a catalogue in status ``mapping``: its columns, guessed fields and
    units, the id column, label families with why; prefilled from a preset or the last run."""
    manifest = store.get(catalogue_id)
    if manifest.status != "mapping" or not manifest.proposal:
        return RedirectResponse(cat_url(catalogue_id), status_code=303)
    proposal = manifest.proposal
    preset = presets.find(proposal["columns"])
    chosen = _previous_choices(manifest) if manifest.run > 1 else None
    source = "the previous run" if chosen else None
    if chosen is None and preset is not None:
        chosen, source = dict(preset.choices), f"the preset saved {preset.saved} from " \
                                               f"{preset.source}"
    return _render(request, "mapping.html", screen="mapping", catalogue=manifest.to_json(),
                   **mapping_context(proposal, chosen), prefilled_from=source,
                   rerun=manifest.run > 1,
                   json_url=f"/api/catalogues/{quote(catalogue_id, safe='')}")


def _previous_choices(manifest: Manifest) -> dict[str, Any] | None:
    """The mapping the last run applied (field -> column and unit) and the families it used,
    to fill a re-run's mapping step with."""
    record: dict[str, Any] = dict(manifest.mapping or {})
    mapping: dict[str, Any] = dict(record.get("mapping") or {})
    choices: dict[str, Any] = dict(mapping.get("choices") or {})
    if not choices:
        return None
    options: dict[str, Any] = dict(manifest.options or {})
    return {"map": {f: c["column"] for f, c in choices.items()},
            "units": {f: c["unit"] for f, c in choices.items() if c.get("unit")},
            "families": dict(manifest.summary.get("label_families", {})) if manifest.summary
            else {},
            "hosts": options.get("hosts", {}), "host_units": options.get("host_units", {}),
            "nulls": options.get("nulls", [])}


class RenameIn(BaseModel):
    """A catalogue's new name."""

    name: str = Field(min_length=1, max_length=200)


def _out(manifest: Manifest) -> dict[str, Any]:
    return {**manifest.to_json(), "url": f"/catalogues/{manifest.id}"}


@api.patch("/catalogues/{catalogue_id}")
def rename_catalogue(catalogue_id: str, change: RenameIn, store: StoreDep) -> dict[str, Any]:
    """Rename a catalogue."""
    return _out(store.rename(catalogue_id, change.name.strip()))


@api.post("/catalogues/{catalogue_id}/rerun", status_code=202)
async def rerun_catalogue(catalogue_id: str, store: StoreDep, settings: SettingsDep
                          ) -> dict[str, Any]:
    """Open the mapping step again on the file the catalogue keeps, with the last run's
    choices filled in; its results stay until the new run is published."""
    manifest = store.get(catalogue_id)
    kept = store.kept_source(catalogue_id) if manifest.status == "ready" else None
    if kept is None:
        raise Conflict(f"catalogue '{catalogue_id}' cannot be re-run: it is {manifest.status} "
                       "or was checked before uploaded files were kept; upload it again")
    found = await run_in_threadpool(sniff, kept, manifest.name, settings.max_columns)
    rerun = store.begin_rerun(catalogue_id, found.to_json() if found else None)
    return {**_out(rerun), "url": cat_url(catalogue_id, "mapping")}


@api.delete("/catalogues/{catalogue_id}/rerun")
def discard_rerun(catalogue_id: str, store: StoreDep) -> dict[str, Any]:
    """Give up a re-run being mapped (or that failed): the previous results show again."""
    return _out(store.discard_rerun(catalogue_id))


@api.post("/catalogues/{catalogue_id}/preset", status_code=201)
def save_preset(catalogue_id: str, store: StoreDep, presets: PresetsDep) -> dict[str, Any]:
    """Save this catalogue's mapping choices as the preset for files with its header."""
    manifest = store.get(catalogue_id)
    columns = (manifest.mapping or {}).get("columns") if manifest.mapping else None
    if not columns or manifest.options is None:
        raise Conflict(f"catalogue '{catalogue_id}' has no checked mapping to save yet")
    preset = presets.save(columns, manifest.options, manifest.name)
    return {"key": preset.key, "columns": preset.columns, "choices": preset.choices,
            "saved": preset.saved}
