"""The density diagram: the bodies of one label by mass and bulk density (log-log), on bins of
the label's own, under the two edges of its family's plausible band drawn at every mass (the
band the ``family-density`` rule applies at each body's own mass, from the composition curves):
what lies outside the edges is what the rule flags.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, TypedDict

import numpy as np
import polars as pl

from bodycensus.diagrams.base import BODY_RULES, Axis, Pending, Run, flagged_rows
from bodycensus.diagrams.plots import (
    LIMIT_STYLE,
    empty,
    flagged_traces,
    heatmap,
    layout,
    log_ticks,
    text,
)
from bodycensus.diagrams.shapes import Choice, Choices, Figure, Flagged
from bodycensus.science.display_units import DISPLAY_UNITS, FAMILY_UNITS, symbol
from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.rules.bands import band_density

MASS, DENSITY = Axis("mass"), Axis("density")
AXES = (MASS, DENSITY)
RULES = BODY_RULES
BINS = 40  # per axis, per label
BAND_REACH = 1.0  # decades of density beyond a label's data that its plane may show for the band
GRID = 80  # masses at which the band's edges are drawn


class BandEdges(TypedDict):
    """A family's band at masses across the plane (log10 kg; log10 kg m-3, None past a curve)."""

    x: list[float]
    low: list[float | None]
    high: list[float | None]


class DensityPlane(TypedDict):
    """One label's bodies on its mass-density plane: sparse counts [x bin, y bin, n]."""

    label: str
    family: str | None
    x_edges: list[float]
    y_edges: list[float]
    cells: list[list[int]]
    band: BandEdges | None


class DensityAggregate(TypedDict):
    """Every drawn label's plane and the flagged bodies."""

    flagged: list[Flagged]
    series: list[DensityPlane]


def band_edges(family: str | None, x_edges: Sequence[float]) -> BandEdges | None:
    """The family's plausible band at ``GRID`` masses across ``x_edges`` (None without a band)."""
    params = FAMILY_PARAMETERS.get(family or "unknown")
    if params is None or params.density_band is None or not x_edges:
        return None
    xs = np.linspace(x_edges[0], x_edges[-1], GRID).tolist()
    low, high = [], []
    for x in xs:
        band = band_density(params.density_band, 10.0 ** x)
        low.append(math.log10(band[0]) if band else None)
        high.append(math.log10(band[1]) if band else None)
    return {"x": xs, "low": low, "high": high}


def _edges(run: Run) -> dict[str, tuple[list[float], list[float]]]:
    """Per drawn label: its mass bins and its density bins, widened to show its band."""
    out = {}
    families = {r["label"]: r["family"] for r in run.labels.iter_rows(named=True)}
    for label in run.top:
        x_lo, x_hi = run.label_ranges.get(MASS, {}).get(label, (None, None))
        y_lo, y_hi = run.label_ranges.get(DENSITY, {}).get(label, (None, None))
        if None in (x_lo, x_hi, y_lo, y_hi):
            continue
        assert x_lo is not None and x_hi is not None and y_lo is not None and y_hi is not None
        x_edges = _span(x_lo, x_hi)
        band = band_edges(families.get(label), x_edges)
        ends = [v for v in (band["low"] + band["high"]) if v is not None] if band else []
        if ends:
            y_lo = min(y_lo, max(min(ends), y_lo - BAND_REACH))
            y_hi = max(y_hi, min(max(ends), y_hi + BAND_REACH))
        out[label] = (x_edges, _span(y_lo, y_hi))
    return out


def _span(low: float, high: float) -> list[float]:
    """``BINS`` equal bins from ``low`` to ``high`` (a unit-wide window round a single value)."""
    if high - low < 1e-9:
        low, high = low - 0.5, high + 0.5
    width = (high - low) / BINS
    return [low + i * width for i in range(BINS)] + [high]


def aggregate(run: Run) -> Pending[DensityAggregate] | None:
    """Counts per label on its own mass-density bins, and the bodies flagged by the body rules.
    """
    edges = _edges(run)
    if not edges:
        return None
    per_label = pl.LazyFrame(
        {"label": list(edges), "x0": [e[0][0] for e in edges.values()],
         "dx": [(e[0][-1] - e[0][0]) / BINS for e in edges.values()],
         "y0": [e[1][0] for e in edges.values()],
         "dy": [(e[1][-1] - e[1][0]) / BINS for e in edges.values()]},
        schema={"label": pl.String, "x0": pl.Float64, "dx": pl.Float64, "y0": pl.Float64,
                "dy": pl.Float64})

    def index(axis: Axis, start: str, step: str) -> pl.Expr:
        return ((axis.expr() - pl.col(start)) / pl.col(step)).floor().cast(pl.Int64).clip(
            0, BINS - 1)

    counts = (run.bodies.join(per_label, on="label", how="inner")
              .select("label", index(MASS, "x0", "dx").alias("x"),
                      index(DENSITY, "y0", "dy").alias("y")).drop_nulls()
              .group_by("label", "x", "y").agg(pl.len().alias("n")))

    def finish(frames: Sequence[pl.DataFrame]) -> DensityAggregate:
        cells: dict[str, list[list[int]]] = {}
        for label, x, y, n in frames[0].sort("label", "x", "y").iter_rows():
            cells.setdefault(label, []).append([x, y, n])
        families = {r["label"]: r["family"] for r in run.labels.iter_rows(named=True)}
        series: list[DensityPlane] = [
            {"label": label, "family": families.get(label), "x_edges": xe, "y_edges": ye,
             "cells": cells.get(label, []), "band": band_edges(families.get(label), xe)}
            for label, (xe, ye) in edges.items()]
        return {"flagged": flagged_rows(frames[1]), "series": series}

    return Pending([counts, run.flagged_plan(RULES, AXES)], finish)


def choices(diagram: DensityAggregate | None, choice: Choice) -> Choices:
    """One label at a time: the chosen one if drawn, else the most common."""
    labels = tuple(s["label"] for s in diagram["series"]) if diagram else ()
    label = choice.label if choice.label in labels else (labels[0] if labels else None)
    return Choices(label=label, labels=labels)


def figure(diagram: DensityAggregate | None, choice: Choice) -> Figure:
    """One label's mass-density plane with its family's band edges at every mass; the axes
    in the label's units (ticks in Earth, Jupiter or solar masses, density in g/cm3)."""
    if not diagram or not diagram["series"]:
        return empty("Density", "No body has both a mass and a radius.")
    plane = next((s for s in diagram["series"] if s["label"] == choice.label),
                 diagram["series"][0])
    matrix = [[0] * BINS for _ in range(BINS)]
    for x, y, n in plane["cells"]:
        matrix[y][x] = n
    data = [heatmap({"flagged": [], "x_edges": plane["x_edges"], "y_edges": plane["y_edges"],
                     "z": matrix})]
    data += _band_traces(plane)
    data += flagged_traces([r for r in diagram["flagged"] if r.get("label") == plane["label"]])
    mass_unit = FAMILY_UNITS.unit("mass", plane["family"], 10.0 ** plane["x_edges"][-1])
    look = layout(f"Density of {text(plane['label'])} (family {text(plane['family'])}) by mass",
                  f"mass ({symbol(mass_unit)})", "bulk density (g/cm<sup>3</sup>)")
    look["xaxis"].update(log_ticks(plane["x_edges"][0], plane["x_edges"][-1],
                                   DISPLAY_UNITS[mass_unit].to_si))
    look["yaxis"].update(log_ticks(plane["y_edges"][0], plane["y_edges"][-1], 1000.0))
    look["meta"] = {"plane": True}
    if plane["band"] is None:
        look["annotations"] = [_note(f"family {text(plane['family'])} has no density band: "
                                     "family-density does not judge it")]
    return {"data": data, "layout": look}


def _band_traces(plane: DensityPlane) -> list[dict[str, Any]]:
    """The band's lower and upper edge at each mass, the space between them shaded."""
    band = plane["band"]
    if band is None:
        return []
    colour, dash = LIMIT_STYLE["suspect"]
    common = {"type": "scatter", "mode": "lines", "meta": "reference", "x": band["x"],
              "hoverinfo": "name", "connectgaps": False,
              "line": {"color": colour, "width": 2, "dash": dash}}
    return [{**common, "name": "plausible band, lower edge (family-density)", "y": band["low"]},
            {**common, "name": "plausible band, upper edge (family-density)", "y": band["high"],
             "fill": "tonexty", "fillcolor": "rgba(29, 95, 138, 0.08)"}]


def _note(words: str) -> dict[str, Any]:
    return {"text": words, "xref": "paper", "yref": "paper", "x": 1.0, "y": 1.0,
            "xanchor": "right", "yanchor": "bottom", "showarrow": False,
            "font": {"size": 11, "color": "#555"}, "bgcolor": "#ffffff"}

