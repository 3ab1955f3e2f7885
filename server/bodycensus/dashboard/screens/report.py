"""Download report: the current view as ONE self-contained HTML file that opens with no server.

The file inlines the stylesheet, plotly.js from the installed plotly package and every figure as
JSON, so it can be mailed or archived and still shows interactive plots offline.
"""

from __future__ import annotations

from datetime import UTC, datetime
from importlib.resources import files
from typing import Any

from jinja2 import Environment

from bodycensus.dashboard.screens.page_context import CAPTIONS, DIAGRAMS
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import plots


def plotly_source() -> str:
    """The text of plotly.min.js shipped in the plotly package."""
    return (files("plotly") / "package_data" / "plotly.min.js").read_text(encoding="utf-8")


def stylesheet() -> str:
    """The dashboard's stylesheet, to inline."""
    return (files("bodycensus.web") / "static" / "app.css").read_text(encoding="utf-8")


def figures_for_view(aggs: dict[str, Any], state: ViewState) -> list[dict[str, Any]]:
    """The view's diagram, or every diagram when the view names none, with titles and captions."""
    chosen = [state.diagram] if state.diagram in DIAGRAMS else list(DIAGRAMS)
    label = state.label[0] if state.label else None
    return [{"key": key, "title": DIAGRAMS[key], "caption": CAPTIONS[key],
             "figure": plots.figure_for(aggs, key, label, state.field)} for key in chosen]


def build_report(env: Environment, catalogue: dict[str, Any], state: ViewState,
                 aggs: dict[str, Any], figures: list[dict[str, Any]],
                 findings: dict[str, Any]) -> str:
    """The report's HTML: summary counts, the view's filters, its figures and findings."""
    template = env.get_template("report.html")
    return template.render(
        catalogue=catalogue, state=state, filters=state.filters, query=state.to_query(),
        severity=aggs.get("severity", []), rules=aggs.get("rules", []), figures=figures,
        page=findings, created=datetime.now(UTC).isoformat(timespec="seconds"),
        css=stylesheet(), plotly_js=plotly_source(),
    )
