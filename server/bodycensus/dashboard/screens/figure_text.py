"""The text twin of a drawn figure: one row per marked point (a flagged body, an artefact spike)
with its hover text, so a keyboard or a screen reader reaches every marker (WCAG 1.1.1, 2.1.1).

Reads the figure dict the page draws (``meta``, ``customdata`` and ``hovertext`` of its traces,
see ``diagrams.plots``), so the table lists exactly what the plot shows.
"""

from __future__ import annotations

import html
import re
from typing import Any

from bodycensus.dashboard.screens.shapes import DrawnMark
from bodycensus.diagrams.shapes import Figure
from bodycensus.science.severity import SEVERITIES

MARKED = ("flagged", "artefact")
_TAG = re.compile(r"<[^>]*>")


def plain_text(markup: str) -> str:
    """One line of plotly hover markup as text: tags go, entities are decoded (catalogue text in
    it was escaped, so only the figure's own tags are removed)."""
    return html.unescape(_TAG.sub("", markup)).strip()


def _severity(trace: dict[str, Any]) -> str | None:
    """A flagged trace's severity, from its legend name (``"impossible (12)"``)."""
    word = str(trace.get("name") or "").split(" ", 1)[0]
    return word if trace.get("meta") == "flagged" and word in SEVERITIES else None


def drawn_marks(figure: Figure) -> list[DrawnMark]:
    """Each marked point of ``figure`` once: severity, body id (None for an artefact) and what its
    hover says besides the id; a body drawn in two panels is listed once."""
    rows: list[DrawnMark] = []
    seen: set[str] = set()
    for trace in figure.get("data") or []:
        if trace.get("meta") not in MARKED:
            continue
        hovers = list(trace.get("hovertext") or [])
        bodies = list(trace.get("customdata") or []) if trace["meta"] == "flagged" else []
        for i, hover in enumerate(hovers):
            body = bodies[i] if i < len(bodies) else None
            if body is not None and body in seen:
                continue
            parts = [plain_text(p) for p in str(hover).split("<br>")]
            if body is not None:
                seen.add(body)
                parts = parts[1:] if parts and parts[0] == str(body) else parts
            rows.append({"severity": _severity(trace), "body": body,
                         "text": " · ".join(p for p in parts if p)})
    return rows
