"""The Compare screen's diagram: one label's field in two runs, their histograms overlaid.

Not a registered diagram (those draw one catalogue's aggregates): its input is one row of a
comparison (``engines.shifts.ShiftRow``), whose histograms share their edges and hold fractions
of each run's sample, so runs of different sizes draw on one axis.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from bodycensus.diagrams.plots import ACCENT, centres, empty, layout, log_ticks, text
from bodycensus.diagrams.shapes import Figure
from bodycensus.science.units import FIELD_DIMENSIONS, SI_UNIT

OLD_COLOUR = "#5f6670"  # the muted grey of the page; the new run in the accent colour
# 500 px tall (not the shared 560): the figure box of the page is 520 px and hides overflow, so
# the legend under the axis stays in view.


def figure(row: Mapping[str, Any] | None, old_name: str, new_name: str) -> Figure:
    """The two histograms of ``row`` overlaid, titled with the test's outcome."""
    if not row:
        return empty("Distribution in both runs", "No label and field has enough systems in "
                     "both runs to compare.")
    hist = row["histogram"]
    edges = hist["edges"]
    verdict = "shifted" if row["shifted"] else "no shift reported"
    title = (f"{text(row['label'])}: {row['field']} ({verdict}; D = {row['statistic']:.3f}, "
             f"q = {row['q_value']:.2g}, effect {row['effect']:.2f} SD)")
    log = row["scale"] == "log10"
    unit = SI_UNIT.get(FIELD_DIMENSIONS.get(row["field"], ""), "")
    where = ", ".join(part for part in (unit if unit != "1" else "", "log scale" if log else "")
                      if part)
    look = layout(title, f"{row['field']} ({where})" if where else row["field"],
                  "share of the run's bodies", barmode="overlay", height=500)
    if log:
        look["xaxis"].update(log_ticks(edges[0], edges[-1]))
    at = "10^%{x:.2f}" if log else "%{x:.3g}"
    data = [_bars(edges, hist[side], f"{side}: {name}", colour, at)
            for side, name, colour in (("old", old_name, OLD_COLOUR), ("new", new_name, ACCENT))]
    return {"data": data, "layout": look}


def _bars(edges: list[float], shares: list[float], name: str, colour: str, at: str
          ) -> dict[str, Any]:
    """One run's histogram as translucent bars (shares of its bodies)."""
    return {"type": "bar", "name": text(name), "x": centres(edges), "y": shares,
            "width": [(edges[-1] - edges[0]) / len(shares)] * len(shares),
            "marker": {"color": colour, "opacity": 0.55, "line": {"width": 0}},
            "hovertemplate": f"{at}: %{{y:.1%}} of {text(name)}<extra></extra>"}
