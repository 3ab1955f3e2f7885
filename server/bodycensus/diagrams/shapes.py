"""The JSON shapes the diagrams pass around: flagged bodies, heatmaps, reference lines and
figures, the engine's artefact and coverage rows, and a person's choice of label and field.

Types only (TypedDicts and two small frozen records), so every room of the house can name them.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, NotRequired, TypedDict


class Flagged(TypedDict):
    """A body drawn on top of a diagram: its most serious finding among the diagram's rules."""

    body: str
    label: str | None
    rule: str
    severity: str
    message: str | None
    margin: float | None
    x: float
    y: NotRequired[float]


class Heatmap(TypedDict):
    """A 2-D histogram: ``z[y][x]`` bodies between the edges, and the flagged bodies."""

    flagged: list[Flagged]
    x_edges: list[float]
    y_edges: list[float]
    z: list[list[int]]


class ProportionalLine(TypedDict):
    """A reference line y = coefficient x, drawn on log-log axes as y' = log10(c) + x'."""

    name: str
    coefficient: float


@dataclass(frozen=True)
class Choice:
    """What the person chose to see in a diagram (from the URL): a label, a field."""

    label: str | None = None
    field: str | None = None


@dataclass(frozen=True)
class Choices:
    """A choice resolved against a diagram's aggregate: what is shown and what may be chosen;
    ``all_labels`` offers "every label", shown when ``label`` is None."""

    label: str | None = None
    field: str | None = None
    labels: tuple[str, ...] = ()
    fields: tuple[str, ...] = ()
    all_labels: bool = False

    @property
    def choice(self) -> Choice:
        """The resolved choice, for the figure."""
        return Choice(self.label, self.field)


class Figure(TypedDict):
    """A plotly figure as JSON: traces and layout (plotly's own schema, hence plain dicts)."""

    data: list[dict[str, Any]]
    layout: dict[str, Any]


class Artefact(TypedDict):
    """A distribution artefact as the engine's artefacts.parquet holds it (SI values)."""

    scope: str
    label: str | None
    field: str
    kind: str
    at: float | None
    low: float | None
    high: float | None
    observed: float | None
    expected: float | None
    evidence: str | None
    p_value: float | None


class CoverageRow(TypedDict):
    """A rule's coverage as coverage.parquet holds it: bodies judged, skipped and why."""

    rule: str
    title: str
    severity: str
    evaluated: int
    skipped: int
    why: str
