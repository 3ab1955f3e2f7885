"""The shapes of what the screens' data functions return and the pages render: the seams from
``queries`` and ``page_context`` to the routes, as TypedDicts of plain JSON-ready data.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, NotRequired, TypedDict

from markupsafe import Markup

from bodycensus.diagrams.shapes import Artefact, CoverageRow, Figure
from bodycensus.input.sniff import ProposalRecord


class Finding(TypedDict):
    """A finding as findings.parquet holds it (the contract in DEVELOPERS.md)."""

    body: str
    rule: str
    severity: str
    value: float | None
    limit: float | None
    unit: str | None
    margin: float | None
    message: str | None
    source: str | None
    label: str | None
    family: str | None
    _row: int | None
    decision: str | None  # the triage decision covering it (storage/triage.py), None: undecided
    decision_scope: str | None
    decision_note: str | None
    decided_by: str | None
    decided_at: str | None
    name: NotRequired[str | None]
    system: NotRequired[str | None]
    parent: NotRequired[str | None]


class FindingsPage(TypedDict):
    """One page of the filtered findings."""

    total: int
    offset: int
    limit: int
    items: list[Finding]


class FieldRow(TypedDict):
    """A canonical field of a body: its SI value and unit, and how the file gave it."""

    field: str
    value: Any
    unit: str | None
    column: str | None
    original_unit: str | None
    original: Any


class Relative(TypedDict, total=False):
    """A body next to another (parent, sibling or child): the columns the table has, and the
    most serious severity found for it."""

    id: str
    name: str | None
    label: str | None
    family: str | None
    parent: str | None
    mass: float | None
    radius: float | None
    semi_major_axis: float | None
    eccentricity: float | None
    periapsis: float | None
    apoapsis: float | None
    roche_rigid: float | None
    roche_fluid: float | None
    hill_radius: float | None
    ring_inner_edge: float | None
    ring_outer_edge: float | None
    ring_implied_density: float | None
    worst: str | None


MAX_RELATIVES = 200  # siblings or children a body detail lists, for the system drawing


class SystemAround(TypedDict):
    """A body's parent, siblings and children (at most ``MAX_RELATIVES`` of each)."""

    parent: Relative | None
    siblings: list[Relative]
    children: list[Relative]


class BodyDetail(TypedDict):
    """Everything about one body: fields, derived values, the file's other columns, findings
    (most serious first) and its system."""

    id: str
    row: int | None
    bad: str | None
    duplicates: int
    fields: list[FieldRow]
    derived: dict[str, Any]
    extra: dict[str, Any]
    findings: list[Finding]
    system: SystemAround


class CatalogueBrief(TypedDict):
    """The catalogue an overview is about."""

    id: str | None
    name: str | None
    rows: int | None
    created: str | None
    status: str | None


class Overview(TypedDict):
    """A catalogue's overview: its run's summary, rule coverage and its strongest artefacts
    (``ARTEFACTS_SHOWN`` at most, of ``artefacts_total``)."""

    catalogue: CatalogueBrief
    summary: dict[str, Any]
    coverage: list[CoverageRow]
    artefacts: list[Artefact]
    artefacts_total: int


class SystemRow(TypedDict):
    """One system of the systems list: its bodies, primary, findings and worst severity."""

    system: str
    bodies: int
    primary: str | None
    findings: int | None
    worst: str | None
    worst_body: str | None
    counts: dict[str, int]


class SystemsPage(TypedDict):
    """One page of the systems, most serious first."""

    total: int
    offset: int
    limit: int
    items: list[SystemRow]


class TreeRow(Relative, total=False):
    """A body of a system's tree: its depth and its children's ids."""

    findings: int
    depth: int
    children: list[str]


class SystemDetail(TypedDict):
    """A system's bodies in depth-first tree order, capped."""

    system: str
    total: int
    shown: int
    capped: bool
    bodies: list[TreeRow]


class DiagramLink(TypedDict):
    """A diagram in the chooser."""

    key: str
    title: str
    current: bool
    href: str


class DiagramContext(TypedDict):
    """The Diagrams screen: the chosen diagram's figure, caption, choices and the chooser."""

    diagram: str
    diagram_title: str
    caption: str
    figure: Figure
    figure_json: Markup  # the figure as JSON, safe inside the page's script element
    drawn: list[DrawnMark]  # its marked points
    flags: bool
    label: str | None
    field: str | None
    all_labels: bool
    label_choices: list[str]
    field_choices: list[str]
    diagrams: list[DiagramLink]


class DrawnMark(TypedDict):
    """A marked point of a drawn figure, in words: its severity, its body (None for an
    artefact) and what its hover says."""

    severity: str | None
    body: str | None
    text: str


class DrawnPage(TypedDict):
    """One page of a figure's marked points: the marks, how many there are in all, the first
    and last listed (counted from 1) and the addresses of the pages around it."""

    items: list[DrawnMark]
    total: int
    first: int
    last: int
    prev_href: str | None
    next_href: str | None


class MappingRow(TypedDict):
    """One column of the file in the mapping step: samples and its guessed field and unit."""

    column: str
    samples: list[Any]
    field: str | None
    unit: str | None
    ambiguous: bool


class MappingContext(TypedDict):
    """The mapping step: the proposal, a row per column, the id's column, each label's family
    with why, and the choices offered."""

    proposal: ProposalRecord
    mapping_rows: list[MappingRow]
    fields: tuple[str, ...]
    units: list[str]
    families_all: tuple[str, ...]
    label_families: list[tuple[str, str]]
    label_rows: list[dict[str, str]]
    id_column: str | None
    row_numbers: str
    unknown_turns_off: list[str]
    host_columns_text: str  # one row per planet: "name=star_name, mass=star_mass" chosen before
    host_units_text: str
    nulls_text: str


class ArtefactRow(Artefact):
    """An artefact with where it is in words (display units; SI on hover), a link to its
    distribution diagram, and ``also`` when its family-wide twin was folded into it."""

    where: str
    si: str
    href: str
    also: NotRequired[str]


class RelativeRow(Relative, total=False):
    """A relative in the Body screen's table: which relation it is."""

    relation: str


class DerivedRow(TypedDict):
    """A derived quantity of a body: its value (SI), as shown, its unit, and SI for hover."""

    name: str
    value: Any
    text: str
    unit: str
    si: str


class BodyExtras(TypedDict):
    """The Body screen beyond the body detail: names, worst severity, derived rows, relatives
    and the drawings of its system."""

    name: Any
    label: Any
    family: Any
    worst: str | None
    derived: list[DerivedRow]
    derived_notes: list[str]
    fields_shown: dict[str, Any]
    relatives: list[RelativeRow]
    file_columns: dict[str, Any]
    relatives_capped: bool
    system_figures: dict[str, Figure]
    system_default: str
    system_caption: str


def column_mapping(report: Mapping[str, Any] | None) -> Mapping[str, Any]:
    """The column mapping (``choices``, ``unknown_columns``) of a manifest's ingest report
    (``IngestReport.to_json()``); a bare mapping is taken as it is."""
    return (report or {}).get("mapping") or report or {}
