"""The distributions diagram: histograms of one numeric field per label on shared bins, with the
generator artefacts found in it marked (a line at a cutoff, a band over a gap, a star at a spike).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, TypedDict, cast

import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.base import BINS, Axis, Pending, Run, records
from bodycensus.diagrams.plots import (
    ACCENT,
    SEVERITY_STYLE,
    centres,
    empty,
    layout,
    log_ticks,
    text,
)
from bodycensus.diagrams.shapes import Artefact, Choice, Choices, Figure
from bodycensus.science.artefacts import ARTEFACT_FIELDS

# Numeric fields offered, with their SI unit; fields the artefact detector scans are offered too
# when it found something in them. Linear ones are listed; every other field is binned on log10.
FIELDS: dict[str, str] = {
    "mass": "kg", "radius": "m", "semi_major_axis": "m", "eccentricity": "1", "period": "s",
    "rotation_period": "s", "age": "years", "temperature": "K", "luminosity": "W",
    "density": "kg/m3", "gravity": "m/s2", "escape_speed": "m/s",
}
LINEAR_FIELDS = frozenset({"eccentricity", "age"})
PALETTE = (ACCENT, "#7f7f7f", "#b35806", "#1b7837", "#762a83", "#8c510a", "#01665e")


def field_axis(field: str) -> Axis:
    """The binning axis of a field (log10 unless linear)."""
    return Axis(field, log=field not in LINEAR_FIELDS)


AXES = tuple(field_axis(f) for f in dict.fromkeys([*FIELDS, *ARTEFACT_FIELDS]))


def field_axes(choice: Choice) -> tuple[Axis, ...]:
    """The axis of the chosen field (the first field offered when none is chosen)."""
    return (field_axis(choice.field if choice.field in dict.fromkeys([*FIELDS, *ARTEFACT_FIELDS])
                       else next(iter(FIELDS))),)
RULES: tuple[str, ...] = ()  # artefacts, not findings, are drawn on top


class LabelCounts(TypedDict):
    """One label's counts on the field's bins."""

    label: str
    counts: list[int]


class FieldHistogram(TypedDict):
    """One field: log10 or linear bins, its SI unit, and the counts of each drawn label."""

    log: bool
    unit: str
    edges: list[float]
    series: list[LabelCounts]


class DistributionsAggregate(TypedDict):
    """Every field's histograms, the artefacts found, and each drawn label's family (to match
    the artefacts found per family)."""

    fields: dict[str, FieldHistogram]
    artefacts: list[Artefact]
    families: dict[str, str | None]


def shown_fields(run: Run) -> list[str]:
    """The offered fields the table has, then any other field an artefact was found in."""
    fields = [f for f in FIELDS if f in run.columns]
    if run.artefacts.height:
        fields += [f for f in run.artefacts["field"].unique().sort().to_list()
                   if f in run.columns and f not in fields and field_axis(f) in AXES]
    return [f for f in fields if run.edges(field_axis(f), BINS)]


def aggregate(run: Run) -> Pending[DistributionsAggregate] | None:
    """Per field and drawn label, counts on the field's bins; the artefacts as found."""
    fields, top = shown_fields(run), run.top
    edges = {f: run.edges(field_axis(f), BINS) for f in fields}
    subset = run.bodies.filter(pl.col("label").is_in(top))
    plans = [binning.counts_plan(subset, field_axis(f).expr(), edges[f], group="label")
             for f in fields]

    def finish(frames: Sequence[pl.DataFrame]) -> DistributionsAggregate:
        out: dict[str, FieldHistogram] = {}
        for field, frame in zip(fields, frames, strict=True):
            by_label = binning.dense_counts_by(frame, "label", BINS)
            out[field] = {"log": field not in LINEAR_FIELDS, "unit": FIELDS.get(field, ""),
                          "edges": edges[field],
                          "series": [{"label": lb, "counts": by_label[lb]} for lb in top
                                     if lb in by_label]}
        families = dict(run.labels.filter(pl.col("label").is_in(top))
                        .select("label", "family").iter_rows())
        return {"fields": out, "artefacts": cast(list[Artefact], records(run.artefacts)),
                "families": families}

    return Pending(plans, finish)


def choices(diagram: DistributionsAggregate | None, choice: Choice) -> Choices:
    """A field (the chosen one, else the first) and one label or every label."""
    fields = tuple(diagram["fields"]) if diagram else ()
    field = choice.field if choice.field in fields else (fields[0] if fields else None)
    if diagram is None or field is None:
        return Choices(fields=fields, all_labels=True)
    labels = tuple(s["label"] for s in diagram["fields"][field]["series"])
    return Choices(label=choice.label if choice.label in labels else None, field=field,
                   labels=labels, fields=fields, all_labels=True)


def figure(diagram: DistributionsAggregate | None, choice: Choice) -> Figure:
    """Histogram of one numeric field per label (step lines), with its artefacts marked."""
    if not diagram or not diagram["fields"]:
        return empty("Distributions", "No numeric field has values.")
    field = choice.field if choice.field in diagram["fields"] else next(iter(diagram["fields"]))
    label, spec = choice.label, diagram["fields"][field]
    series = [s for s in spec["series"] if label in (None, "", s["label"])]
    data = [_step(spec["edges"], s, i) for i, s in enumerate(series)]
    shown = {s["label"] for s in series}
    families = {diagram["families"].get(lb) for lb in shown}
    artefacts = [a for a in diagram["artefacts"] if a["field"] == field and
                 a["label"] in (families if a["scope"] == "family" else shown)]
    top = max((max(s["counts"]) for s in series), default=1)
    shapes, marks = _artefact_marks(artefacts, spec["log"], top)
    unit = f" ({spec['unit']})" if spec.get("unit") not in (None, "", "1") else ""
    look = layout(f"Distribution of {field}" + (f" for {text(label)}" if label else ""),
                  f"{field}{unit}", "bodies", shapes=shapes)
    low, high = _occupied(spec["edges"], series, artefacts, spec["log"])
    look["xaxis"]["range"] = [low, high]
    if spec["log"]:
        look["xaxis"].update(log_ticks(low, high))
    return {"data": data + marks, "layout": look}


def _occupied(edges: list[float], series: list[LabelCounts], artefacts: list[Artefact],
              log: bool) -> tuple[float, float]:
    """The x range holding the shown labels' values and their artefacts, with a bin of margin."""
    used = [i for s in series for i, n in enumerate(s["counts"]) if n]
    if not used:
        return edges[0], edges[-1]
    width = edges[1] - edges[0]
    low, high = edges[min(used)] - width, edges[max(used) + 1] + width
    for a in artefacts:
        for value in (a.get("at"), a.get("low"), a.get("high")):
            if value is not None and (value > 0 or not log):
                x = math.log10(value) if log else value
                low, high = min(low, x - width), max(high, x + width)
    return low, high


def _step(edges: list[float], series: LabelCounts, i: int) -> dict[str, Any]:
    """One label's histogram as a step line, so many labels can share the axes."""
    return {"type": "scatter", "mode": "lines", "name": text(series["label"]),
            "x": centres(edges), "y": series["counts"],
            "line": {"shape": "hvh", "width": 1.6, "color": PALETTE[i % len(PALETTE)]},
            "hovertemplate": f"{text(series['label'])}: %{{y}} bodies<extra></extra>"}


def _artefact_marks(artefacts: list[Artefact], log: bool,
                    top: float) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """Shapes (a line at a cutoff, a band for a gap) and spike markers for the artefacts."""
    def pos(value: float | None) -> float | None:
        if value is None:
            return None
        return math.log10(value) if log and value > 0 else (None if log else value)

    colour = SEVERITY_STYLE["suspect"][0]
    shapes, spikes = [], []
    for a in artefacts:
        at, low, high = pos(a.get("at")), pos(a.get("low")), pos(a.get("high"))
        if a["kind"] == "cutoff" and at is not None:
            shapes.append({"type": "line", "xref": "x", "yref": "paper", "x0": at, "x1": at,
                           "y0": 0, "y1": 1, "name": "cutoff",
                           "line": {"color": colour, "width": 2}})
        elif a["kind"] == "gap" and low is not None and high is not None:
            shapes.append({"type": "rect", "xref": "x", "yref": "paper", "x0": low, "x1": high,
                           "y0": 0, "y1": 1, "name": "gap", "line": {"width": 0},
                           "fillcolor": colour, "opacity": 0.15})
        elif a["kind"] == "spike" and at is not None:
            spikes.append((at, a))
    marks = [{"type": "scatter", "mode": "markers", "meta": "artefact", "name": "spike",
              "x": [s[0] for s in spikes], "y": [top * 1.05] * len(spikes),
              "hovertext": [f"spike in {text(a['label'])}: {text(a.get('evidence'))}"
                            for _, a in spikes], "hovertemplate": "%{hovertext}<extra></extra>",
              "marker": {"symbol": "star", "size": 13, "color": colour}}]
    return shapes, marks if spikes else []
