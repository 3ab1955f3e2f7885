"""A region drawn on a diagram (a box or a lasso), as a filter on bodies: the Findings and Bodies
lists show what lies inside it, and the region stays in the URL so a selection is a link.

The region is in the diagram's own coordinates (``diagrams.base.Axis``: log10 where an axis is
logarithmic), as plotly reports a selection, so a body is inside exactly when the point the
diagram draws for it is. A lasso is tested by ray casting, one term per edge (Jordan curve
theorem, as in any point-in-polygon test); hand-written because it is one polars expression
over the bodies table, which no library gives.
"""

from __future__ import annotations

import polars as pl

from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams import registry
from bodycensus.diagrams.base import Axis
from bodycensus.diagrams.shapes import Choice
from bodycensus.errors import BadInput


def region_axes(state: ViewState) -> tuple[Axis, ...]:
    """The axes of the diagram the region was drawn on (BadInput for an unknown diagram)."""
    diagram = registry.BY_KEY.get(state.region_of or "")
    if diagram is None:
        raise BadInput(f"region_of={str(state.region_of)[:40]!r} names no diagram; use one of "
                       f"{', '.join(registry.KEYS)}")
    return diagram.region_axes(Choice(label=None, field=state.field))


def _numbers(text: str) -> list[float]:
    return [float(v) for v in text.replace(";", ",").replace(" ", ",").split(",")]


def _box(axes: tuple[Axis, ...], numbers: list[float]) -> pl.Expr:
    """Inside a box: between the two numbers given for each axis (x, then y)."""
    if len(numbers) != 2 * len(axes):
        raise BadInput(f"region= needs {2 * len(axes)} numbers for this diagram (x0,x1"
                       f"{',y0,y1' if len(axes) == 2 else ''})")
    inside = pl.lit(True)
    for i, axis in enumerate(axes):
        low, high = sorted(numbers[2 * i:2 * i + 2])
        inside = inside & axis.expr().is_between(low, high)
    return inside


def _polygon(axes: tuple[Axis, ...], points: list[tuple[float, float]]) -> pl.Expr:
    """Inside a lasso: an odd number of its edges cross the ray from the point to +x."""
    if len(axes) == 1:  # a lasso on a histogram spans the x values it encloses
        xs = [p[0] for p in points]
        return axes[0].expr().is_between(min(xs), max(xs))
    x, y = axes[0].expr(), axes[1].expr()
    crossings = pl.lit(False)
    for (x1, y1), (x2, y2) in zip(points, points[1:] + points[:1], strict=True):
        if y1 == y2:
            continue
        straddles = (y1 > y) != (y2 > y)
        at = x1 + (y - y1) * (x2 - x1) / (y2 - y1)
        crossings = crossings ^ (straddles & (x < at))
    return crossings & x.is_not_null() & y.is_not_null()


def region_filter(state: ViewState) -> pl.Expr | None:
    """The filter on bodies of the view's region, or None when it has none."""
    if state.region is None and state.lasso is None:
        return None
    axes = region_axes(state)
    if state.lasso is not None:
        points = [(float(a), float(b)) for a, b in
                  (pair.split(" ") for pair in state.lasso.split(";"))]
        return _polygon(axes, points)
    assert state.region is not None
    numbers = _numbers(state.region)
    if len(numbers) == 2 and len(axes) == 2:
        axes = axes[:1]  # a box drawn across the x axis only
    return _box(axes, numbers)


def describe(state: ViewState) -> str | None:
    """The region in words, for the page: which diagram and which axes it spans."""
    if state.region is None and state.lasso is None:
        return None
    axes = region_axes(state)
    shape = "lasso" if state.lasso else "box"
    names = " and ".join(a.column for a in axes)
    diagram = registry.BY_KEY[state.region_of or ""].title
    return f"a {shape} drawn on the {diagram} diagram ({names})"
