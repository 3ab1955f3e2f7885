"""The orbit margins, two histograms side by side: apoapsis over the parent's Hill radius, and
how far each period is from Kepler's third law, with the tolerance the run was checked with.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, NamedTuple, TypedDict

import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.base import BINS, Axis, Pending, Run, flagged_rows
from bodycensus.diagrams.plots import (
    LIMIT_STYLE,
    bars,
    empty,
    flagged_traces,
    layout,
    line,
    log_ticks,
    on_bars,
)
from bodycensus.diagrams.shapes import Choice, Figure, Flagged
from bodycensus.science.physics.orbits import stable_hill_fraction

HILL = Axis("hill_ratio")
# Kepler residual in per cent, (P / P_Kepler - 1) x 100, in a +-10 % window: clean periods
# agree to a fraction of a per cent, so a log axis spanning the outliers shows one spike.
KEPLER_WINDOW = (-10.0, 10.0)
KEPLER = Axis("period_ratio", scale=0.01, log=False, offset=100.0, window=KEPLER_WINDOW)
AXES = (HILL, KEPLER)
HILL_RULES = ("outside-hill-sphere", "beyond-stable-hill")
KEPLER_RULES = ("kepler-mismatch",)
RULES = HILL_RULES + KEPLER_RULES


def panel_axes(choice: Choice) -> tuple[Axis, ...]:
    """The axis of the panel a region was drawn on: ``field`` names its column (the Hill panel
    unless it names the Kepler one)."""
    return (KEPLER,) if choice.field == KEPLER.column else (HILL,)


class ReferenceLine(TypedDict):
    """A vertical line at ``at`` (axis units) and what it means: ``reference`` for a law or an
    expected value, else the severity a rule gives beyond it (``plots.LIMIT_STYLE``)."""

    name: str
    at: float
    meaning: str


class MarginPanel(TypedDict):
    """One margin histogram: bins, counts, reference lines and flagged bodies."""

    flagged: list[Flagged]
    edges: list[float]
    counts: list[int]
    lines: list[ReferenceLine]


class OrbitsAggregate(TypedDict):
    """Both panels; a panel is None when no body has what it needs."""

    hill: MarginPanel | None
    kepler: MarginPanel | None


def hill_lines() -> list[ReferenceLine]:
    """The Hill radius and the stable prograde limit for circular orbits (log10 of the ratio)."""
    stable = float(stable_hill_fraction(0.0, 0.0))
    return [{"name": "Hill radius (outside-hill-sphere beyond)", "at": 0.0,
             "meaning": "impossible"},
            {"name": "stable prograde limit, circular (beyond-stable-hill beyond)",
             "at": math.log10(stable), "meaning": "unstable"}]


def kepler_lines(tolerance: float) -> list[ReferenceLine]:
    """Kepler's law and the ``kepler-mismatch`` tolerance either side, as a residual in %."""
    percent = 100.0 * tolerance
    return [{"name": "Kepler's third law", "at": 0.0, "meaning": "reference"},
            {"name": f"kepler-mismatch tolerance (+-{percent:g} %)", "at": -percent,
             "meaning": "suspect"},
            {"name": f"kepler-mismatch tolerance (+-{percent:g} %)", "at": percent,
             "meaning": "suspect"}]


class _Panel(NamedTuple):
    axis: Axis
    rules: tuple[str, ...]
    lines: list[ReferenceLine]


def aggregate(run: Run) -> Pending[OrbitsAggregate] | None:
    """Each panel's histogram (widened to show its reference lines) and flagged bodies."""
    panels = {"hill": _Panel(HILL, HILL_RULES, hill_lines()),
              "kepler": _Panel(KEPLER, KEPLER_RULES, kepler_lines(run.settings.kepler_tolerance))}
    edges = {name: run.edges(p.axis, BINS, [ref["at"] for ref in p.lines])
             for name, p in panels.items()}
    shown = {name: p for name, p in panels.items() if edges[name]}
    if not shown:
        return None
    plans = [plan for name, p in shown.items()
             for plan in (binning.counts_plan(run.bodies, p.axis.expr(), edges[name]),
                          run.flagged_plan(p.rules, (p.axis,)))]

    def finish(frames: Sequence[pl.DataFrame]) -> OrbitsAggregate:
        found = {name: MarginPanel(
            flagged=flagged_rows(frames[2 * i + 1]), edges=edges[name], lines=p.lines,
            counts=binning.dense_counts(frames[2 * i], len(edges[name]) - 1))
            for i, (name, p) in enumerate(shown.items())}
        return {"hill": found.get("hill"), "kepler": found.get("kepler")}

    return Pending(plans, finish)


def _panel(panel: MarginPanel | None, axes: tuple[str, str], name: str) -> list[dict[str, Any]]:
    """Bars, reference lines (as traces) and flagged bodies of one margin histogram."""
    if not panel:
        return []
    edges, counts = panel["edges"], panel["counts"]
    data = [bars(edges, counts, name, axes=axes)]
    top = max(counts) if counts else 1
    named: set[str] = set()
    for ref in panel["lines"]:
        colour, dash = LIMIT_STYLE[ref.get("meaning", "reference")]
        trace = line(ref["name"], [ref["at"], ref["at"]], [0, top * 1.1], colour, dash)
        data.append({**trace, "xaxis": axes[0], "yaxis": axes[1], "legendgroup": ref["name"],
                     "showlegend": ref["name"] not in named})
        named.add(ref["name"])
    data += flagged_traces(panel["flagged"], on_bars(panel["flagged"], edges, counts), axes)
    return data


def figure(diagram: OrbitsAggregate | None, choice: Choice) -> Figure:
    """Orbit margins side by side: apoapsis / Hill radius (log) and the Kepler period residual
    in per cent (linear)."""
    hill_panel = diagram["hill"] if diagram else None
    hill = _panel(hill_panel, ("x", "y"), "apoapsis / Hill radius")
    kepler = _panel(diagram["kepler"] if diagram else None, ("x2", "y2"), "period residual (%)")
    if not hill and not kepler:
        return empty("Orbit margins", "No orbiting body has the fields these margins need.")
    look = layout("Orbit margins", "apoapsis / parent's Hill radius", "bodies", bargap=0)
    look["xaxis"]["domain"] = [0.0, 0.46]
    look["xaxis2"] = {"domain": [0.54, 1.0], "anchor": "y2", "gridcolor": "#e3e3e3",
                      "title": {"text": "period / Kepler period - 1 (%); beyond +-10 % at the "
                                        "ends"}}
    look["yaxis2"] = {"anchor": "x2", "gridcolor": "#e3e3e3", "title": {"text": "bodies"}}
    if hill_panel:
        look["xaxis"].update(log_ticks(hill_panel["edges"][0], hill_panel["edges"][-1]))
    look["meta"] = {"panels": {"x": HILL.column, "x2": KEPLER.column}}
    return {"data": hill + kepler, "layout": look}
