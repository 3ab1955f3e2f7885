"""Triage: decide findings and groups of findings, keep the decisions file, and the Triage
screen. The API under ``/api/catalogues/{id}/decisions`` and the page share the data functions
of ``screens.triage``; decisions are stored under the catalogue's key (``storage.decisions``).

Who decided is the name the person typed, which the page keeps in the ``bodycensus_name``
cookie (set by web/static/triage.js) and offers again in every decide form.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal
from urllib.parse import quote

from fastapi import APIRouter, Request, Response
from fastapi.responses import HTMLResponse
from pydantic import BaseModel, ConfigDict, Field

from bodycensus.dashboard.deps import ReadyDir, StoreDep
from bodycensus.dashboard.routes.pages import _render, cat_url, who
from bodycensus.dashboard.screens import triage
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.errors import BadInput
from bodycensus.storage.decisions import MAX_NAME, MAX_TEXT, STATUSES, Decision
from bodycensus.storage.decisions_file import dumps, loads
from bodycensus.storage.store import Store, now

MAX_ITEMS = 10_000  # findings or groups named in one request
api = APIRouter(prefix="/api/catalogues/{catalogue_id}", tags=["triage"])
router = APIRouter(include_in_schema=False)
Text = Annotated[str, Field(max_length=MAX_NAME)]


class Target(BaseModel):
    """A finding (target: the body id) or a group (target: the label or the system)."""

    model_config = ConfigDict(extra="forbid")
    rule: Text
    target: Text


class DecideIn(BaseModel):
    """A decision for findings or groups; ``status`` null clears their decisions."""

    model_config = ConfigDict(extra="forbid")
    scope: Literal["finding", "system", "label"]
    status: Literal["confirmed", "accepted", "wontfix"] | None
    note: str = Field("", max_length=MAX_TEXT)
    by: Text = ""
    items: list[Target] = Field(default_factory=list, max_length=MAX_ITEMS)
    query: str | None = Field(None, max_length=8000, description="with scope finding: every "
                              "finding of this findings view (its URL query)")


class DecidedOut(BaseModel):
    """How many decisions were stored or cleared, under which catalogue key."""

    key: str
    decided: int
    cleared: int


class ImportIn(BaseModel):
    """A decisions file's text; ``replace`` drops the key's other decisions first."""

    model_config = ConfigDict(extra="forbid")
    toml: str = Field(max_length=20_000_000)
    replace: bool = False


class KeyIn(BaseModel):
    """The catalogue key under which a catalogue's decisions are kept."""

    model_config = ConfigDict(extra="forbid")
    key: Text


def _targets(body: DecideIn, store: Store, cat_id: str, decisions: list[Decision]
             ) -> list[tuple[str, str]]:
    """(rule, target) of everything the request names, a findings view expanded."""
    named = [(item.rule, item.target) for item in body.items]
    if body.query is not None:
        if body.scope != "finding":
            raise BadInput("a findings view (query) can only be decided finding by finding")
        state = ViewState.from_query(body.query)
        found = triage.selection(store.ready_dir(cat_id), state, decisions)
        named += [(rule, body_id) for body_id, rule in found]
    if not named:
        raise BadInput("nothing to decide: choose findings or groups first")
    return named


@api.post("/decisions", response_model=DecidedOut)
def decide(catalogue_id: str, body: DecideIn, store: StoreDep) -> DecidedOut:
    """Decide (or, with status null, undecide) findings or groups of this catalogue."""
    key, decisions = triage.decisions_of(store, catalogue_id)
    named = _targets(body, store, catalogue_id, decisions)
    if body.status is None:
        cleared = store.decisions.undo(key, [(body.scope, r, t) for r, t in named])
        return DecidedOut(key=key, decided=0, cleared=cleared)
    when = now()
    chosen = [Decision(body.scope, r, t, body.status, body.note.strip(), body.by.strip(), when)
              for r, t in named]
    return DecidedOut(key=key, decided=store.decisions.decide(key, chosen), cleared=0)


@api.get("/decisions")
def list_decisions(catalogue_id: str, cat_dir: ReadyDir, store: StoreDep) -> dict[str, Any]:
    """The catalogue's key, its decisions, the stale ones and the counts per status."""
    key, decisions = triage.decisions_of(store, catalogue_id)
    return {"key": key, "decisions": [d.__dict__ for d in decisions],
            "stale": [d.__dict__ for d in triage.stale_decisions(cat_dir, decisions)],
            "counts": triage.triage_counts(cat_dir, decisions)}


@api.get("/decisions.toml", response_class=Response)
def export_decisions(catalogue_id: str, store: StoreDep) -> Response:
    """The decisions file (TOML) of the catalogue's key."""
    key, decisions = triage.decisions_of(store, catalogue_id)
    name = "".join(c if c.isalnum() or c in "-_" else "-" for c in key)[:60] or "decisions"
    return Response(dumps(key, decisions), media_type="application/toml; charset=utf-8",
                    headers={"Content-Disposition":
                             f'attachment; filename="{name}.decisions.toml"'})


@api.post("/decisions/import", response_model=DecidedOut)
def import_decisions(catalogue_id: str, body: ImportIn, store: StoreDep) -> DecidedOut:
    """Read a decisions file into the catalogue's key (added to, or replacing, what is kept)."""
    key, _ = triage.decisions_of(store, catalogue_id)
    read = loads(body.toml, "the decisions file")
    if body.replace:
        return DecidedOut(key=key, decided=store.decisions.replace_all(key, read.decisions),
                          cleared=0)
    return DecidedOut(key=key, decided=store.decisions.decide(key, read.decisions), cleared=0)


@api.post("/decisions/key")
def choose_key(catalogue_id: str, body: KeyIn, store: StoreDep) -> dict[str, str]:
    """Keep this catalogue's decisions under another key (e.g. the name of the generator run
    series, so next week's upload under another file name finds them)."""
    store.get(catalogue_id)
    return {"key": store.decisions.set_key(catalogue_id, body.key)}


def triage_context(request: Request, store: Store, cat_id: str, state: ViewState
                   ) -> dict[str, Any]:
    """Triage: the groups table, the decide form, the key, the file and the stale decisions."""
    cat_dir = store.ready_dir(cat_id)
    key, decisions = triage.decisions_of(store, cat_id)
    groups = triage.triage_groups(cat_dir, decisions, state)
    base = f"/api/catalogues/{quote(cat_id, safe='')}"

    def findings_of(rule: str, target: str) -> str:
        filters = ViewState(rule=(rule,), undecided=state.undecided,
                            label=(target,) if groups["by"] == "label" else ())
        return cat_url(cat_id, "findings", state=filters)

    items = [{**g, "findings_href": findings_of(g["rule"], g["target"]) if groups["by"] ==
              "label" else cat_url(cat_id, "systems", g["target"])} for g in groups["items"]]
    return {"screen": "triage", "catalogue": store.get(cat_id).to_json(), "state": state,
            "query": state.to_query(), "json_url": f"{base}/decisions", "key": key,
            "groups": {**groups, "items": items}, "counts": triage.triage_counts(cat_dir,
                                                                                 decisions),
            "stale": triage.stale_decisions(cat_dir, decisions), "statuses": STATUSES,
            "who": who(request), "decide_url": f"{base}/decisions",
            "toml_url": f"{base}/decisions.toml",
            "by_label_href": cat_url(cat_id, "triage", state=state.with_(by=None)),
            "by_system_href": cat_url(cat_id, "triage", state=state.with_(by="system"))}


@router.get("/catalogues/{catalogue_id}/triage", response_class=HTMLResponse)
def triage_screen(request: Request, catalogue_id: str, store: StoreDep) -> HTMLResponse:
    """Triage: decide a rule within a label or a system at once; import or export decisions."""
    state = ViewState.from_query(request.query_params)
    return _render(request, "triage.html",
                   **triage_context(request, store, catalogue_id, state))
