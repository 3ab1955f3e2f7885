"""The mass-radius diagram: bodies binned by mass and radius (log-log) under the radius curves
of cold spheres of iron, rock, water ice (Seager et al. 2007) and hydrogen-helium.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import TypedDict

import numpy as np
import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.base import BINS_2D, BODY_RULES, Axis, Pending, Run, flagged_rows
from bodycensus.diagrams.plots import (
    REFERENCE_COLOURS,
    empty,
    flagged_traces,
    heatmap,
    layout,
    line,
    log_axes,
)
from bodycensus.diagrams.shapes import Choice, Figure, Heatmap
from bodycensus.science.physics import bodies as phys
from bodycensus.science.units import M_EARTH, M_SUN, R_EARTH

MASS, RADIUS = Axis("mass", M_EARTH), Axis("radius", R_EARTH)
AXES = (MASS, RADIUS)
RULES = BODY_RULES
# Composition curves (name, radius function, valid mass range in kg): the Seager et al. 2007
# fits are published up to ~20 M_earth; the cold H/He curve spans giant planets to brown dwarfs.
CURVES: tuple[tuple[str, Callable[[np.ndarray], np.ndarray], tuple[float, float]], ...] = (
    ("iron", lambda m: phys.composition_radius(m, "iron"), (1e-6 * M_EARTH, 20 * M_EARTH)),
    ("rock", lambda m: phys.composition_radius(m, "rock"), (1e-6 * M_EARTH, 20 * M_EARTH)),
    ("water ice", lambda m: phys.composition_radius(m, "water_ice"),
     (1e-6 * M_EARTH, 20 * M_EARTH)),
    ("cold H/He", phys.cold_hhe_radius, (10 * M_EARTH, 0.08 * M_SUN)),
)


class Curve(TypedDict):
    """A composition curve sampled in log10 Earth masses and log10 Earth radii."""

    name: str
    x: list[float]
    y: list[float]


class MassRadiusAggregate(Heatmap):
    """The 2-D histogram with its composition curves."""

    curves: list[Curve]


def aggregate(run: Run) -> Pending[MassRadiusAggregate] | None:
    """Bodies binned on both log axes, the bodies flagged by the body rules, the curves."""
    x_edges, y_edges = run.edges(MASS, BINS_2D), run.edges(RADIUS, BINS_2D)
    if not x_edges or not y_edges:
        return None
    counts = binning.counts_2d_plan(run.bodies, MASS.expr(), x_edges, RADIUS.expr(), y_edges)

    def finish(frames: Sequence[pl.DataFrame]) -> MassRadiusAggregate:
        return {"flagged": flagged_rows(frames[1]), "x_edges": x_edges, "y_edges": y_edges,
                "z": binning.dense_matrix(frames[0], len(x_edges) - 1, len(y_edges) - 1),
                "curves": curves(x_edges)}

    return Pending([counts, run.flagged_plan(RULES, AXES)], finish)


def curves(x_edges: Sequence[float]) -> list[Curve]:
    """Composition curves sampled across the diagram's mass range (log10 M_earth, log10 R_earth)."""
    grid = np.linspace(x_edges[0], x_edges[-1], 120)
    out: list[Curve] = []
    for name, radius, (low, high) in CURVES:
        mass = 10.0**grid * M_EARTH
        keep = (mass >= low) & (mass <= high)
        if keep.sum() >= 2:
            y = np.log10(np.asarray(radius(mass[keep])) / R_EARTH)
            out.append({"name": name, "x": grid[keep].tolist(), "y": y.tolist()})
    return out


def figure(diagram: MassRadiusAggregate | None, choice: Choice) -> Figure:
    """Mass-radius diagram (log-log): 2-D density with iron, rock, water-ice and cold H/He curves.
    """
    if not diagram:
        return empty("Mass and radius", "No body has both a mass and a radius.")
    data = [heatmap(diagram)]
    for i, curve in enumerate(diagram["curves"]):
        data.append(line(f"{curve['name']} (composition curve)", curve["x"], curve["y"],
                         REFERENCE_COLOURS[i % len(REFERENCE_COLOURS)]))
    data += flagged_traces(diagram["flagged"])
    look = layout("Mass and radius", "mass (Earth masses)", "radius (Earth radii)")
    return {"data": data, "layout": log_axes(look, diagram)}
