"""Download report: the current view as ONE self-contained HTML file that opens with no server.

The file inlines the stylesheet, plotly.js from the installed plotly package and every figure as
JSON, so it can be mailed or archived and still shows interactive plots offline.
"""

from __future__ import annotations

from collections.abc import Mapping
from datetime import UTC, datetime
from importlib.resources import files
from typing import Any, TypedDict

from jinja2 import Environment

from bodycensus.dashboard.screens.page_context import rules_summary
from bodycensus.dashboard.screens.shapes import FindingsPage
from bodycensus.dashboard.screens.shown import finding_shown
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import registry
from bodycensus.diagrams.shapes import Choice, Figure


class ReportFigure(TypedDict):
    """A diagram of the report: its key, title, caption and figure."""

    key: str
    title: str
    caption: str
    figure: Figure


def plotly_source() -> str:
    """The text of plotly.min.js shipped in the plotly package."""
    return (files("plotly") / "package_data" / "plotly.min.js").read_text(encoding="utf-8")


def stylesheet() -> str:
    """The dashboard's stylesheet, to inline."""
    return (files("bodycensus.web") / "static" / "app.css").read_text(encoding="utf-8")


def figures_for_view(aggs: Mapping[str, Any], state: ViewState) -> list[ReportFigure]:
    """The view's diagram, or every diagram when the view names none, with titles and captions;
    each shows the view's label and field where it offers them."""
    chosen = ([registry.get(state.diagram)] if state.diagram in registry.KEYS
              else registry.DIAGRAMS)
    asked = Choice(label=state.label[0] if state.label else None, field=state.field)
    figures: list[ReportFigure] = []
    for diagram in chosen:
        aggregate = registry.aggregate_of(aggs, diagram.key)
        shown = diagram.resolve(aggregate, asked).choice
        figures.append({"key": diagram.key, "title": diagram.title, "caption": diagram.caption,
                        "figure": diagram.figure(aggregate, shown)})
    return figures


def build_report(env: Environment, catalogue: Mapping[str, Any], state: ViewState,
                 aggs: Mapping[str, Any], figures: list[ReportFigure],
                 findings: FindingsPage, triage: Mapping[str, object] | None = None) -> str:
    """The report's HTML: summary counts (one entry per rule), triage counts, the view's
    filters, its figures and findings (each with its decision; values, limits and messages in
    the view's units)."""
    template = env.get_template("report.html")
    shown = {**findings, "items": [finding_shown(f, state.display) for f in findings["items"]]}
    return template.render(
        catalogue=catalogue, state=state, filters=state.filters, query=state.to_query(),
        severity=aggs.get("severity", []), rules=rules_summary(aggs.get("rules", [])),
        figures=figures, page=shown, created=datetime.now(UTC).isoformat(timespec="seconds"),
        triage=triage,
        css=stylesheet(), plotly_js=plotly_source(),
    )
