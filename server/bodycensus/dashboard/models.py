"""Pydantic models of the JSON API's requests and answers, so the OpenAPI page documents them."""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, ConfigDict, Field


class ErrorOut(BaseModel):
    """Every error: a short code and one line saying what went wrong and what to do."""

    error: str = Field(examples=["not_found"])
    detail: str = Field(examples=["no catalogue 'abc'; GET /api/catalogues lists them"])


class UploadAccepted(BaseModel):
    """The answer to an upload: the new catalogue's id, status and page."""

    id: str
    status: str = Field(description="mapping (confirm the mapping first) or ingesting")
    url: str = Field(description="the catalogue's page")


class ProgressOut(BaseModel):
    """How far the ingest is: the engine's stage and a fraction of the whole run."""

    stage: str
    fraction: float


class CatalogueOut(BaseModel):
    """A catalogue's manifest: status, progress, rows, error, mapping, summary."""

    id: str
    name: str
    status: str = Field(description="mapping | ingesting | ready | failed")
    created: str
    progress: ProgressOut
    rows: int | None = None
    error: str | None = None
    mapping: dict[str, Any] | None = Field(None, description="the ingest report of a ready "
                                           "catalogue: format, columns, mapping, bad cells")
    proposal: dict[str, Any] | None = Field(None, description="while status is mapping: "
                                            "columns, samples, guessed mapping, families, reasons")
    summary: dict[str, Any] | None = None
    options: dict[str, Any] | None = None
    demo: bool = False
    run: int = Field(1, description="1 for the upload's first run; each re-run adds one")
    preset: str | None = Field(None, description="the mapping preset the run used, if any")
    url: str


class CatalogueList(BaseModel):
    """Every catalogue, newest first (without summaries)."""

    items: list[CatalogueOut]


class MappingIn(BaseModel):
    """The person's corrections in the mapping step."""

    model_config = ConfigDict(extra="forbid")

    map: dict[str, str] = Field(default_factory=dict, description="field -> column",
                                examples=[{"radius": "r_km"}])
    units: dict[str, str] = Field(default_factory=dict, description="field -> unit",
                                  examples=[{"radius": "km"}])
    families: dict[str, str] = Field(default_factory=dict, description="label -> family",
                                     examples=[{"Frost world": "ice"}])
    hosts: dict[str, str] = Field(default_factory=dict, description="one row per planet: host "
                                  "field -> column; a row per host is built from them",
                                  examples=[{"name": "star_name", "mass": "star_mass"}])
    host_units: dict[str, str] = Field(default_factory=dict, description="host field -> unit",
                                       examples=[{"mass": "solar_mass"}])
    nulls: list[str] = Field(default_factory=list, description="cell texts that mean no value",
                             examples=[["-1", "--"]])
    save_preset: bool = Field(False, description="keep these choices for the next upload with "
                                                 "the same header")


class Finding(BaseModel):
    """One finding: a body, the rule it breaks, by how much, and the published source."""

    model_config = ConfigDict(extra="allow", populate_by_name=True)

    body: str | None = None
    rule: str
    severity: str
    value: float | None = None
    limit: float | None = None
    unit: str | None = None
    margin: float | None = Field(None, description="how far past the limit, as a fraction of it")
    message: str | None = None
    source: str | None = None
    label: str | None = None
    family: str | None = None
    row: int | None = Field(None, alias="_row", description="1-based data row in the file")
    decision: str | None = Field(None, description="confirmed, accepted or wontfix; null when "
                                                    "no triage decision covers the finding")
    decision_scope: str | None = Field(None, description="finding, system or label")
    decision_note: str | None = None
    decided_by: str | None = None
    decided_at: str | None = None
    name: str | None = Field(None, description="the body's name")
    system: str | None = Field(None, description="the body's system")
    parent: str | None = Field(None, description="the id of the body it orbits")


class FindingsPage(BaseModel):
    """One page of the filtered, sorted findings."""

    total: int
    offset: int
    limit: int
    items: list[Finding]


class FieldValue(BaseModel):
    """A canonical field of a body in SI and as the file gave it."""

    field: str
    value: Any = None
    unit: str | None = None
    column: str | None = None
    original_unit: str | None = None
    original: Any = None


class SystemOut(BaseModel):
    """The body's parent, siblings and children, for the drawing of its system."""

    parent: dict[str, Any] | None = None
    siblings: list[dict[str, Any]]
    children: list[dict[str, Any]]


class BodyOut(BaseModel):
    """Everything about one body."""

    id: str
    row: int | None = None
    bad: str | None = Field(None, description="fields whose cells were unreadable")
    duplicates: int = Field(description="other rows with the same id")
    fields: list[FieldValue]
    derived: dict[str, Any]
    extra: dict[str, Any] = Field(description="the file's columns that map to no field")
    findings: list[Finding]
    system: SystemOut


class ViewIn(BaseModel):
    """A view to save: the catalogue, the view's URL query, a title and a note."""

    model_config = ConfigDict(extra="forbid")

    catalogue: str = Field(max_length=40)
    query: str = Field("", max_length=8000, examples=["severity=impossible&sort=-margin"])
    title: str = Field(min_length=1, max_length=200)
    note: str = Field("", max_length=5000)


class ViewOut(BaseModel):
    """A saved view and its address."""

    slug: str
    url: str
    catalogue: str
    query: str
    title: str
    note: str
    created: str


class ViewList(BaseModel):
    """The saved views of a catalogue, newest first."""

    items: list[ViewOut]


class Overview(BaseModel):
    """The overview of a ready catalogue."""

    catalogue: dict[str, Any]
    summary: dict[str, Any]
    coverage: list[dict[str, Any]]
    artefacts: list[dict[str, Any]]
    artefacts_total: int


class DiagramOut(BaseModel):
    """A diagram of the registry: its key (``diagram=`` in a view's address, and its place in
    the aggregates), title, caption and the rules whose findings it draws on top."""

    key: str = Field(examples=["roche"])
    title: str
    caption: str
    rules: list[str]
