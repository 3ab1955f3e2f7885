"""Rings on the Roche plane: x = (planet density / ring material density)^(1/3), y = the ring's
outer edge / planet radius. A ring on the fluid line y = 2.44 x has an outer edge that implies
exactly its material's density; above it the edge implies a lighter material.
"""

from __future__ import annotations

from collections.abc import Sequence

import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.base import BINS_2D, Axis, Pending, Run, flagged_rows
from bodycensus.diagrams.plots import (
    empty,
    flagged_traces,
    heatmap,
    layout,
    line,
    log_axes,
    proportional_lines,
)
from bodycensus.diagrams.shapes import Choice, Figure, Heatmap, ProportionalLine
from bodycensus.science.physics.orbits import FLUID_ROCHE_COEFFICIENT, RIGID_ROCHE_COEFFICIENT

MATERIAL, OUTER_EDGE = Axis("ring_roche_x"), Axis("ring_roche_y")
AXES = (MATERIAL, OUTER_EDGE)
RULES = ("ring-inside-planet", "ring-beyond-roche", "ring-beyond-hill", "ring-edges-reversed")


class RingsAggregate(Heatmap):
    """The 2-D histogram of ring outer edges with the lines y = c x."""

    lines: list[ProportionalLine]


def aggregate(run: Run) -> Pending[RingsAggregate] | None:
    """Rings binned on the plane by their outer edge, and the rings the ring rules flagged."""
    x_edges, y_edges = run.edges(MATERIAL, BINS_2D), run.edges(OUTER_EDGE, BINS_2D, [0.0])
    if not x_edges or not y_edges:
        return None
    counts = binning.counts_2d_plan(run.bodies, MATERIAL.expr(), x_edges, OUTER_EDGE.expr(),
                                    y_edges)
    lines: list[ProportionalLine] = [
        {"name": "rigid Roche limit", "coefficient": RIGID_ROCHE_COEFFICIENT},
        {"name": "fluid Roche limit", "coefficient": FLUID_ROCHE_COEFFICIENT},
        {"name": "ring-beyond-roche limit",
         "coefficient": FLUID_ROCHE_COEFFICIENT * run.settings.ring_roche_tolerance}]

    def finish(frames: Sequence[pl.DataFrame]) -> RingsAggregate:
        return {"flagged": flagged_rows(frames[1]), "x_edges": x_edges, "y_edges": y_edges,
                "z": binning.dense_matrix(frames[0], len(x_edges) - 1, len(y_edges) - 1),
                "lines": lines}

    return Pending([counts, run.flagged_plan(RULES, AXES)], finish)


def figure(diagram: RingsAggregate | None, choice: Choice) -> Figure:
    """The rings' heatmap, the Roche lines, the planet's surface and the flagged rings."""
    if not diagram:
        return empty("Rings", "No ring with an outer edge about a planet of known density.")
    x0, x1 = diagram["x_edges"][0], diagram["x_edges"][-1]
    data = [heatmap(diagram), *proportional_lines(diagram["lines"], x0, x1),
            line("planet surface (y = 1)", [x0, x1], [0.0, 0.0], "#666666", "dot"),
            *flagged_traces(diagram["flagged"])]
    look = layout("Rings on the Roche plane: above the fluid line the outer edge implies a "
                  "lighter material", "(planet density / ring material density)<sup>1/3</sup>",
                  "ring outer edge / planet radius")
    return {"data": data, "layout": log_axes(look, diagram)}
