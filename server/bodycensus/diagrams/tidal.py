"""The tidal-locking diagram: orbiting bodies by age and by the time tides need to despin them,
with the line where the two are equal and the ``tidal-lock-age`` limit of the run's settings.
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
    log_axes,
    proportional_lines,
)
from bodycensus.diagrams.shapes import Choice, Figure, Heatmap, ProportionalLine

AGE, LOCK_TIME = Axis("age"), Axis("tidal_lock_time")  # both in years
AXES = (AGE, LOCK_TIME)
RULES = ("tidal-lock-age",)


class TidalAggregate(Heatmap):
    """The 2-D histogram with the lines lock time = c x age."""

    lines: list[ProportionalLine]


def aggregate(run: Run) -> Pending[TidalAggregate] | None:
    """Bodies binned by log age and log despinning time; bodies locked too soon on top."""
    x_edges, y_edges = run.edges(AGE, BINS_2D), run.edges(LOCK_TIME, BINS_2D)
    if not x_edges or not y_edges:
        return None
    counts = binning.counts_2d_plan(run.bodies, AGE.expr(), x_edges, LOCK_TIME.expr(), y_edges)
    factor = run.settings.lock_time_factor
    lines: list[ProportionalLine] = [
        {"name": "despinning time = age", "coefficient": 1.0},
        {"name": "tidal-lock-age limit", "coefficient": factor}]

    def finish(frames: Sequence[pl.DataFrame]) -> TidalAggregate:
        return {"flagged": flagged_rows(frames[1]), "x_edges": x_edges, "y_edges": y_edges,
                "z": binning.dense_matrix(frames[0], len(x_edges) - 1, len(y_edges) - 1),
                "lines": lines}

    return Pending([counts, run.flagged_plan(RULES, AXES)], finish)


def figure(diagram: TidalAggregate | None, choice: Choice) -> Figure:
    """The heatmap, the two lines and the bodies flagged as locked sooner than tides allow."""
    if not diagram:
        return empty("Tidal locking", "No orbiting body has an age and a despinning time.")
    x0, x1 = diagram["x_edges"][0], diagram["x_edges"][-1]
    data = [heatmap(diagram), *proportional_lines(diagram["lines"], x0, x1),
            *flagged_traces(diagram["flagged"])]
    look = layout("Tidal locking: above the limit a locked body is suspect", "age (years)",
                  "despinning time (years)")
    return {"data": data, "layout": log_axes(look, diagram)}
