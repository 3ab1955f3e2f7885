"""The Roche plane: (parent density / body density)^(1/3) against periapsis / parent radius, on
which the rigid and fluid Roche limits and the parent's surface are straight lines.
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

DENSITY_RATIO, DISTANCE = Axis("roche_x"), Axis("roche_y")
AXES = (DENSITY_RATIO, DISTANCE)
RULES = ("periapsis-inside-parent", "inside-rigid-roche", "inside-fluid-roche")
LINES: tuple[ProportionalLine, ...] = (
    {"name": "rigid Roche limit", "coefficient": RIGID_ROCHE_COEFFICIENT},
    {"name": "fluid Roche limit", "coefficient": FLUID_ROCHE_COEFFICIENT},
)


class RocheAggregate(Heatmap):
    """The 2-D histogram with the Roche lines y = c x."""

    lines: list[ProportionalLine]


def aggregate(run: Run) -> Pending[RocheAggregate] | None:
    """Orbiting bodies binned on the plane, and the bodies flagged inside a Roche limit."""
    x_edges, y_edges = run.edges(DENSITY_RATIO, BINS_2D), run.edges(DISTANCE, BINS_2D)
    if not x_edges or not y_edges:
        return None
    counts = binning.counts_2d_plan(run.bodies, DENSITY_RATIO.expr(), x_edges, DISTANCE.expr(),
                                    y_edges)

    def finish(frames: Sequence[pl.DataFrame]) -> RocheAggregate:
        return {"flagged": flagged_rows(frames[1]), "x_edges": x_edges, "y_edges": y_edges,
                "z": binning.dense_matrix(frames[0], len(x_edges) - 1, len(y_edges) - 1),
                "lines": list(LINES)}

    return Pending([counts, run.flagged_plan(RULES, AXES)], finish)


def figure(diagram: RocheAggregate | None, choice: Choice) -> Figure:
    """The plane's heatmap, the rigid and fluid lines, the parent's surface, flagged bodies."""
    if not diagram:
        return empty("Roche plane", "No orbiting body has densities for itself and its parent.")
    x0, x1 = diagram["x_edges"][0], diagram["x_edges"][-1]
    data = [heatmap(diagram), *proportional_lines(diagram["lines"], x0, x1)]
    data.append(line("parent surface (y = 1)", [x0, x1], [0.0, 0.0], "#666666", "dot"))
    data += flagged_traces(diagram["flagged"])
    look = layout("Roche plane: below a line the body is inside that Roche limit",
                  "(parent density / body density)<sup>1/3</sup>", "periapsis / parent radius")
    return {"data": data, "layout": log_axes(look, diagram)}
