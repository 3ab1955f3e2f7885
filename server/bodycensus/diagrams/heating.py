"""The tidal-heating diagram: each eccentric body's tidal heat flux against its distance in fluid
Roche limits, with the rigid and fluid limits and Io's measured heat flux as reference lines.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.base import BINS_2D, Axis, Pending, Run, flagged_rows
from bodycensus.diagrams.plots import empty, flagged_traces, heatmap, layout, line, log_axes
from bodycensus.diagrams.shapes import Choice, Figure, Heatmap
from bodycensus.science.physics.orbits import FLUID_ROCHE_COEFFICIENT, RIGID_ROCHE_COEFFICIENT
from bodycensus.science.physics.tides import IO_HEAT_FLUX

DISTANCE, FLUX = Axis("roche_distance"), Axis("tidal_heat_flux")  # a / fluid limit; W m-2
AXES = (DISTANCE, FLUX)
RULES = ("tidal-heating",)
RIGID_AT = RIGID_ROCHE_COEFFICIENT / FLUID_ROCHE_COEFFICIENT  # the rigid limit in fluid limits


class HeatingAggregate(Heatmap):
    """The 2-D histogram with where the reference lines stand (log10 units)."""

    io_flux: float
    rigid: float


def aggregate(run: Run) -> Pending[HeatingAggregate] | None:
    """Heated bodies binned by log distance and log heat flux; the ones hotter than Io on top."""
    references = [math.log10(RIGID_AT), 0.0]
    x_edges = run.edges(DISTANCE, BINS_2D, references)
    y_edges = run.edges(FLUX, BINS_2D, [math.log10(IO_HEAT_FLUX)])
    if not x_edges or not y_edges:
        return None
    counts = binning.counts_2d_plan(run.bodies, DISTANCE.expr(), x_edges, FLUX.expr(), y_edges)

    def finish(frames: Sequence[pl.DataFrame]) -> HeatingAggregate:
        return {"flagged": flagged_rows(frames[1]), "x_edges": x_edges, "y_edges": y_edges,
                "z": binning.dense_matrix(frames[0], len(x_edges) - 1, len(y_edges) - 1),
                "io_flux": math.log10(IO_HEAT_FLUX), "rigid": math.log10(RIGID_AT)}

    return Pending([counts, run.flagged_plan(RULES, AXES)], finish)


def figure(diagram: HeatingAggregate | None, choice: Choice) -> Figure:
    """The heatmap, the Roche limits (vertical), Io's heat flux (horizontal), flagged bodies."""
    if not diagram:
        return empty("Tidal heating", "No orbiting body has an eccentric orbit, a mass and a "
                     "radius.")
    x0, x1 = diagram["x_edges"][0], diagram["x_edges"][-1]
    y0, y1 = diagram["y_edges"][0], diagram["y_edges"][-1]
    data = [heatmap(diagram),
            line("rigid Roche limit", [diagram["rigid"]] * 2, [y0, y1], "#c0392b", "dash"),
            line("fluid Roche limit", [0.0, 0.0], [y0, y1], "#b35806", "dash"),
            line(f"Io's heat flux ({IO_HEAT_FLUX:g} W/m²)", [x0, x1], [diagram["io_flux"]] * 2,
                 "#1b7837"),
            *flagged_traces(diagram["flagged"])]
    look = layout("Tidal heating: above the green line a body is heated more than Io",
                  "semi-major axis / fluid Roche limit", "tidal heat flux (W m<sup>-2</sup>)")
    return {"data": data, "layout": log_axes(look, diagram)}
