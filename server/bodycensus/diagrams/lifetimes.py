"""The remaining-life diagram: per label, a histogram of the tidal decay time left over the
system's age, with one age and the short-lived-orbit limit the catalogue was checked with.

A generator that ignores tides shows a pile-up far below 1: states a real system would not be
caught in.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import TypedDict

import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.base import BINS, Axis, Pending, Run, flagged_rows
from bodycensus.diagrams.plots import (
    bars,
    empty,
    flagged_traces,
    layout,
    line,
    log_ticks,
    on_bars,
    text,
)
from bodycensus.diagrams.shapes import Choice, Choices, Figure, Flagged

LIFE = Axis("life_to_age")  # tidal decay time / system age
AXES = (LIFE,)
RULES = ("short-lived-orbit",)


class LabelLives(TypedDict):
    """One label's counts on the shared bins."""

    label: str
    counts: list[int]


class LifetimesAggregate(TypedDict):
    """Shared log10 bins, each drawn label's counts, the limit (log10) and the flagged bodies."""

    edges: list[float]
    series: list[LabelLives]
    limit: float
    flagged: list[Flagged]


def aggregate(run: Run) -> Pending[LifetimesAggregate] | None:
    """Counts of log10(remaining life / age) per drawn label, and the short-lived bodies."""
    limit = math.log10(run.settings.short_life_fraction)
    edges = run.edges(LIFE, BINS, [limit, 0.0])
    if not edges:
        return None
    top = run.top
    counts = binning.counts_plan(run.bodies.filter(pl.col("label").is_in(top)), LIFE.expr(),
                                 edges, group="label")

    def finish(frames: Sequence[pl.DataFrame]) -> LifetimesAggregate:
        by_label = binning.dense_counts_by(frames[0], "label", BINS)
        return {"edges": edges, "limit": limit, "flagged": flagged_rows(frames[1]),
                "series": [{"label": lb, "counts": by_label[lb]} for lb in top
                           if lb in by_label]}

    return Pending([counts, run.flagged_plan(RULES, AXES)], finish)


def choices(diagram: LifetimesAggregate | None, choice: Choice) -> Choices:
    """One label (the chosen one, else the most common with a decaying orbit) or every label."""
    labels = tuple(s["label"] for s in diagram["series"]) if diagram else ()
    return Choices(label=choice.label if choice.label in labels else None, labels=labels,
                   all_labels=True)


def figure(diagram: LifetimesAggregate | None, choice: Choice) -> Figure:
    """The histogram of one label (or of every label together), with one age and the limit."""
    if not diagram or not diagram["series"]:
        return empty("Remaining tidal life", "No orbit decays by tides, or no body has an age.")
    shown = [s for s in diagram["series"] if choice.label in (None, "", s["label"])]
    if not shown:
        shown = diagram["series"]
    edges = diagram["edges"]
    counts = [sum(column) for column in zip(*(s["counts"] for s in shown), strict=True)]
    name = shown[0]["label"] if len(shown) == 1 else "every label"
    flagged = [r for r in diagram["flagged"] if r.get("label") in {s["label"] for s in shown}]
    top = max(counts) if counts and max(counts) else 1
    data = [bars(edges, counts, name),
            line("one system age", [0.0, 0.0], [0, top], "#1b7837", "dash"),
            line("short-lived-orbit limit", [diagram["limit"]] * 2, [0, top], "#c04c00"),
            *flagged_traces(flagged, on_bars(flagged, edges, counts))]
    look = layout(f"Remaining tidal life of {text(name)}: left of the orange line a state is "
                  "short-lived", "tidal decay time left / system age", "bodies", bargap=0)
    look["xaxis"].update(log_ticks(edges[0], edges[-1]))
    return {"data": data, "layout": look}
