"""The density diagram: a histogram of bulk density per label, on bins of the label's own, with
its family's plausible band (the rules' band at the label's median mass) shaded behind it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, TypedDict

import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.base import BINS, BODY_RULES, Axis, Pending, Run, flagged_rows
from bodycensus.diagrams.plots import (
    ACCENT,
    bars,
    empty,
    flagged_traces,
    layout,
    log_ticks,
    on_bars,
    text,
)
from bodycensus.diagrams.shapes import Choice, Choices, Figure, Flagged
from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.rules.bands import band_density

DENSITY = Axis("density")
AXES = (DENSITY,)
RULES = BODY_RULES
BAND_REACH = 2.0  # decades of density beyond a label's data that its histogram may show


class DensitySeries(TypedDict):
    """One label's histogram: its bins (log10 kg m-3), counts and its family's band there."""

    label: str
    family: str | None
    median_mass: float | None
    edges: list[float]
    counts: list[int]
    band: list[float] | None


class DensityAggregate(TypedDict):
    """Every drawn label's histogram and the flagged bodies."""

    flagged: list[Flagged]
    series: list[DensitySeries]


def label_band(family: str | None, median_mass: float | None) -> list[float] | None:
    """The log10 plausible density band of a family at a label's median mass (None without)."""
    params = FAMILY_PARAMETERS.get(family or "unknown")
    if params is None or params.density_band is None:
        return None
    band = band_density(params.density_band, median_mass)
    return [math.log10(b) for b in band] if band else None


def label_edges(run: Run) -> dict[str, list[float]]:
    """Log10 density bin edges per drawn label: its own data range, widened to show its
    family's plausible band (at most ``BAND_REACH`` decades beyond the data)."""
    ranges, out = run.label_ranges.get(DENSITY, {}), {}
    info = {r["label"]: r for r in run.labels.iter_rows(named=True)}
    for label in run.top:
        low, high = ranges.get(label, (None, None))
        if low is None or high is None:
            continue
        band = label_band(info[label]["family"], info[label]["median_mass"])
        if band:
            low = min(low, max(band[0], low - BAND_REACH))
            high = max(high, min(band[1], high + BAND_REACH))
        out[label] = binning.edges(low, high, BINS)
    return out


def aggregate(run: Run) -> Pending[DensityAggregate] | None:
    """Counts per label on the label's own bins, and the bodies flagged by the body rules."""
    edges = label_edges(run)
    if not edges:
        return None
    per_label = pl.LazyFrame({"label": list(edges), "lo": [e[0] for e in edges.values()],
                              "width": [(e[-1] - e[0]) / BINS for e in edges.values()]},
                             schema={"label": pl.String, "lo": pl.Float64, "width": pl.Float64})
    index = ((DENSITY.expr() - pl.col("lo")) / pl.col("width")).floor().cast(pl.Int64)
    counts = (run.bodies.join(per_label, on="label", how="inner")
              .select("label", index.clip(0, BINS - 1).alias("bin")).drop_nulls()
              .group_by("label", "bin").agg(pl.len().alias("n")))

    def finish(frames: Sequence[pl.DataFrame]) -> DensityAggregate:
        by_label = binning.dense_counts_by(frames[0], "label", BINS)
        info = {r["label"]: r for r in run.labels.iter_rows(named=True)}
        series: list[DensitySeries] = [
            {"label": label, "family": info[label]["family"],
             "median_mass": info[label]["median_mass"], "edges": bins,
             "counts": by_label.get(label, [0] * BINS),
             "band": label_band(info[label]["family"], info[label]["median_mass"])}
            for label, bins in edges.items()]
        return {"flagged": flagged_rows(frames[1]), "series": series}

    return Pending([counts, run.flagged_plan(RULES, AXES)], finish)


def choices(diagram: DensityAggregate | None, choice: Choice) -> Choices:
    """One label at a time: the chosen one if drawn, else the most common."""
    labels = tuple(s["label"] for s in diagram["series"]) if diagram else ()
    label = choice.label if choice.label in labels else (labels[0] if labels else None)
    return Choices(label=label, labels=labels)


def figure(diagram: DensityAggregate | None, choice: Choice) -> Figure:
    """Density histogram of one label (log axis) with its family's plausible band shaded."""
    if not diagram or not diagram["series"]:
        return empty("Density", "No body has both a mass and a radius.")
    series = next((s for s in diagram["series"] if s["label"] == choice.label),
                  diagram["series"][0])
    edges = series["edges"]
    flagged = [r for r in diagram["flagged"] if r.get("label") == series["label"]]
    data = [bars(edges, series["counts"], series["label"])]
    data += flagged_traces(flagged, on_bars(flagged, edges, series["counts"]))
    look = layout(f"Density of {text(series['label'])} (family {text(series['family'])})",
                  "bulk density (kg m<sup>-3</sup>)", "bodies", bargap=0)
    look["xaxis"].update(log_ticks(edges[0], edges[-1]))
    if series["band"]:
        look["shapes"] = [_band_shape(*series["band"])]
        look["annotations"] = [_band_note(series)]
    return {"data": data, "layout": look}


def _band_shape(low: float, high: float) -> dict[str, Any]:
    """A shaded vertical band between two x values (data units) across the whole height."""
    return {"type": "rect", "xref": "x", "yref": "paper", "x0": low, "x1": high, "y0": 0, "y1": 1,
            "fillcolor": ACCENT, "opacity": 0.12, "line": {"width": 0}, "layer": "below",
            "name": "plausible band"}


def _band_note(series: DensitySeries) -> dict[str, Any]:
    """The caption of the plausible band: which family and at which mass it is evaluated."""
    mass = series.get("median_mass")
    at = f" at the median mass {mass:.3g} kg" if mass else ""
    return {"text": f"shaded: plausible density for family {text(series['family'])}{at}",
            "xref": "paper", "yref": "paper", "x": 1.0, "y": 1.0, "xanchor": "right",
            "yanchor": "bottom", "showarrow": False, "font": {"size": 11, "color": "#555"}}
