"""The downloadable report: the view's figures (or every diagram's), inlined with plotly.js and
the stylesheet into one HTML file."""

from __future__ import annotations

import json
import re
from typing import Any

from jinja2 import Environment, FileSystemLoader, select_autoescape

from bodycensus.dashboard.routes.pages import TEMPLATES_DIR
from bodycensus.dashboard.screens.page_context import format_number
from bodycensus.dashboard.screens.report import build_report, figures_for_view
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import registry


def test_the_views_diagram_with_its_label(engine_aggs: dict[str, Any]) -> None:
    (figure,) = figures_for_view(engine_aggs, ViewState(diagram="density", label=("G2V",)))
    assert (figure["key"], figure["title"]) == ("density", registry.get("density").title)
    assert "G2V" in figure["figure"]["layout"]["title"]["text"]


def test_a_label_the_diagram_lacks_falls_back(engine_aggs: dict[str, Any]) -> None:
    (figure,) = figures_for_view(engine_aggs, ViewState(diagram="distributions",
                                                        label=("nobody",), field="mass"))
    panels = {a["text"] for a in figure["figure"]["layout"]["annotations"]}
    assert {"Rocky world", "Gas giant"} <= panels  # every label, a panel each


def test_one_file_with_every_figure_inline(engine_aggs: dict[str, Any]) -> None:
    env = Environment(loader=FileSystemLoader(TEMPLATES_DIR), autoescape=select_autoescape())
    env.filters["num"] = format_number
    figures = figures_for_view(engine_aggs, ViewState())
    page: Any = {"total": 0, "offset": 0, "limit": 50, "items": []}
    html = build_report(env, {"id": "c", "name": "Sector <9>", "rows": 107}, ViewState(),
                        engine_aggs, figures, page)
    assert "Sector &lt;9&gt;" in html and "<link" not in html and "/static/" not in html
    embedded = re.findall(r'<script type="application/json" id="data-\d+">(.*?)</script>', html,
                          re.DOTALL)
    assert len(embedded) == len(registry.KEYS)
    roche = json.loads(embedded[registry.KEYS.index("roche")])
    assert roche["data"][0]["type"] == "heatmap"
    assert "Plotly" in html and len(html) > 3_000_000  # plotly.js inline
