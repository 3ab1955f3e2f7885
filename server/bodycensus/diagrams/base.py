"""The diagram record and what every diagram is built from: axes, the checked run an aggregate
reads, its flagged bodies, the plans it hands back and the figure it draws.

A diagram is one ``Diagram`` record (``registry.py`` lists them): its aggregate function turns a
``Run`` into lazy polars plans (``Pending``), collected with every other diagram's in one pass,
and its figure function turns the finished, JSON-ready aggregate into a plotly figure dict.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Generic, TypeVar, cast

import polars as pl

from bodycensus.diagrams import binning
from bodycensus.diagrams.shapes import Choice, Choices, Figure, Flagged
from bodycensus.science.rules.body import body_rules
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.rules.statistics import statistics_rules
from bodycensus.science.severity import rank_expr

BINS, BINS_2D, FLAGGED_CAP, LABEL_CAP = 60, 70, 2000, 40
# The rules that judge a body on its own (mass, radius, density, its label's spread), drawn on
# the diagrams of bodies rather than orbits.
BODY_RULES: tuple[str, ...] = tuple(rule.id for rule in (*body_rules(), *statistics_rules()))
A = TypeVar("A")
Range = tuple[float | None, float | None]


@dataclass(frozen=True)
class Axis:
    """One diagram coordinate: a column divided by ``scale`` less ``offset``, on log10 when
    ``log``; with a ``window``, the axis spans just it and values beyond sit at its ends."""

    column: str
    scale: float = 1.0
    log: bool = True
    offset: float = 0.0
    window: tuple[float, float] | None = None

    def expr(self) -> pl.Expr:
        """The coordinate as a polars expression (null where it is undefined)."""
        value = pl.col(self.column) / self.scale - self.offset
        coordinate = binning.log10_positive(value) if self.log else binning.finite(value)
        return coordinate.clip(*self.window) if self.window else coordinate

    def range_exprs(self, name: str) -> list[pl.Expr]:
        """Min and max of the column's usable raw values (cheaper than of the coordinate)."""
        if self.window and not self.log:
            low, high = ((end + self.offset) * self.scale for end in self.window)
            return [pl.lit(low).alias(f"{name}__lo"), pl.lit(high).alias(f"{name}__hi")]
        col = pl.col(self.column)
        usable = col.is_finite() & (col > 0) if self.log else col.is_finite()
        return binning.range_exprs(name, col.filter(usable))

    def coordinate(self, raw: float | None) -> float | None:
        """A raw value (e.g. a range end from ``range_exprs``) on this axis."""
        if raw is None:
            return None
        return math.log10(raw / self.scale) if self.log else raw / self.scale - self.offset


@dataclass(frozen=True)
class Run:
    """One checked catalogue as every aggregate sees it: the engine's tables, the labels most
    common first (count, main family, median mass, per-label ranges), each axis's data range
    (as coordinates) and the orbit settings the catalogue was checked with."""

    bodies: pl.LazyFrame
    findings: pl.LazyFrame
    artefacts: pl.DataFrame
    columns: frozenset[str]
    labels: pl.DataFrame
    ranges: Mapping[Axis, Range]
    label_ranges: Mapping[Axis, Mapping[str, Range]]
    settings: OrbitSettings

    @property
    def top(self) -> list[str]:
        """The ``LABEL_CAP`` most common labels, the ones diagrams draw one by one."""
        return [label for label in self.labels["label"].head(LABEL_CAP).to_list()
                if label is not None]

    def edges(self, axis: Axis, bins: int, references: Sequence[float] = ()) -> list[float]:
        """Equal bins over the axis's data range, widened to show ``references`` (reference
        lines) when there is data; [] when there is none."""
        low, high = self.ranges.get(axis, (None, None))
        if low is not None and high is not None and references:
            pad = 0.1 * max(high - low, 1.0)
            low, high = min(low, min(references) - pad), max(high, max(references) + pad)
        return binning.edges(low, high, bins)

    def flagged_plan(self, rules: Sequence[str], axes: Sequence[Axis]) -> pl.LazyFrame:
        """The most serious finding per body among ``rules``, with its coordinates on ``axes``
        (``x``, then ``y``), most serious and then largest margin first, capped; ties in body
        and rule order, so the same run always draws the same bodies."""
        order: dict[str, Any] = {"by": ["rank", "margin", "body", "rule"],
                                 "descending": [False, True, False, False], "nulls_last": True}
        coords = list("xy"[:len(axes)])
        worst = (self.findings.filter(pl.col("rule").is_in(list(rules)))
                 .with_columns(rank_expr().alias("rank")).sort(**order)
                 .unique("body", keep="first", maintain_order=True))
        where = self.bodies.select(pl.col("id").alias("body"),
                                   *[axis.expr().alias(c) for c, axis in zip(coords, axes,
                                                                             strict=True)])
        return (worst.join(where, on="body", how="inner").drop_nulls(coords).sort(**order)
                .head(FLAGGED_CAP)
                .select("body", "label", "rule", "severity", "message", "margin", *coords))


@dataclass(frozen=True)
class Pending(Generic[A]):
    """An aggregate in waiting: lazy plans, collected with every other diagram's in one pass,
    and how to finish the collected frames into the diagram's JSON-ready aggregate."""

    plans: Sequence[pl.LazyFrame]
    finish: Callable[[Sequence[pl.DataFrame]], A]


@dataclass(frozen=True)
class Diagram(Generic[A]):
    """One diagram: its key in URLs (``?diagram=``) and in the aggregates, title and caption,
    the axes whose data ranges it needs (per label when ``per_label``), the rules whose findings
    it draws on top, its aggregate and figure functions, and how a label or field is chosen."""

    key: str
    title: str
    caption: str
    axes: tuple[Axis, ...]
    rules: tuple[str, ...]
    aggregate: Callable[[Run], Pending[A] | None]
    figure: Callable[[A | None, Choice], Figure]
    choices: Callable[[A | None, Choice], Choices] | None = None
    per_label: bool = False
    selects: Callable[[Choice], tuple[Axis, ...]] | None = None

    def resolve(self, aggregate: A | None, choice: Choice) -> Choices:
        """The choice resolved against this diagram's aggregate (no choices by default)."""
        return self.choices(aggregate, choice) if self.choices else Choices()

    def region_axes(self, choice: Choice) -> tuple[Axis, ...]:
        """The axes a box or lasso drawn on the figure spans (x, then y on a plane): its
        ``axes`` unless the figure shows one of several (a chosen field, one panel of two)."""
        return self.selects(choice) if self.selects else self.axes


def records(frame: pl.DataFrame | None) -> list[dict[str, Any]]:
    """Rows as dicts with non-finite floats turned into None (strict JSON has no NaN)."""
    if frame is None:
        return []
    return [{k: (None if isinstance(v, float) and not math.isfinite(v) else v)
             for k, v in row.items()} for row in frame.iter_rows(named=True)]


def flagged_rows(frame: pl.DataFrame) -> list[Flagged]:
    """The collected ``Run.flagged_plan`` as flagged bodies."""
    return cast(list[Flagged], records(frame))
