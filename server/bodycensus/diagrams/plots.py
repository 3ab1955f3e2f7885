"""The look every figure shares, and its pieces: layout, log ticks, bars, heatmaps, reference
lines, flagged bodies by severity, and the empty figure that says why.

Pure functions building plotly JSON. Traces carry ``meta``: ``"reference"`` (published limits and
curves), ``"flagged"`` (bodies drawn on top, with the body id in ``customdata`` so a click opens
it), ``"artefact"`` (spikes). Catalogue text shown by plotly (labels, messages) is HTML-escaped,
because plotly renders a subset of HTML.
"""

from __future__ import annotations

import html
import math
from collections.abc import Sequence
from itertools import pairwise
from typing import Any

from bodycensus.diagrams.shapes import Figure, Flagged, Heatmap, ProportionalLine
from bodycensus.science.severity import SEVERITIES

ACCENT = "#1d5f8a"
# Colour AND marker shape per severity, so the two cues agree on screen and in greyscale print;
# the colours are the badges' --sev-* of web/static/app.css (a test holds them equal).
SEVERITY_STYLE: dict[str, tuple[str, str]] = {
    "error": ("#5e3c99", "x"),
    "impossible": ("#c0392b", "diamond"),
    "unstable": ("#c04c00", "triangle-up"),
    "suspect": ("#807100", "circle"),
    "note": ("#2976ac", "square"),
}
REFERENCE_COLOURS = ("#333333", "#b35806", "#1b7837", "#762a83", "#666666")
# One line style per meaning on every diagram: a law or expected value is a thin solid grey
# line; a rule's limit takes the colour of the severity it flags beyond, and a dash of its own.
LIMIT_STYLE: dict[str, tuple[str, str]] = {
    "reference": ("#333333", "solid"),
    "impossible": (SEVERITY_STYLE["impossible"][0], "solid"),
    "unstable": (SEVERITY_STYLE["unstable"][0], "dash"),
    "suspect": (SEVERITY_STYLE["suspect"][0], "dot"),
}
Trace = dict[str, Any]


def text(value: Any) -> str:
    """Catalogue data as plotly-safe text: ``< > &`` escaped so a label shows as typed (plotly
    decodes only a few entities, and not ``&quot;``, so quotes stay as they are)."""
    return html.escape("" if value is None else str(value), quote=False)


def layout(title: str, x_title: str, y_title: str, **extra: Any) -> dict[str, Any]:
    """The common look: light background, plain sans-serif, thin grid, legend on top."""
    return {
        "title": {"text": title, "x": 0.0, "font": {"size": 16}},
        "font": {"family": "system-ui, 'Segoe UI', Helvetica, Arial, sans-serif", "size": 13,
                 "color": "#222"},
        "paper_bgcolor": "#ffffff", "plot_bgcolor": "#fafafa",
        "margin": {"l": 70, "r": 20, "t": 50, "b": 120}, "height": 560,
        "legend": {"orientation": "h", "y": -0.16, "yanchor": "top", "x": 0.0},
        "xaxis": {"title": {"text": x_title}, "gridcolor": "#e3e3e3", "zeroline": False},
        "yaxis": {"title": {"text": y_title}, "gridcolor": "#e3e3e3", "zeroline": False},
        "hovermode": "closest", **extra,
    }


def log_ticks(low: float, high: float, unit: float = 1.0, most: int = 10) -> dict[str, Any]:
    """Ticks for an axis in log10 units: powers of ten (10^k), plus 2 and 5 x 10^k when the
    axis spans under three decades, so a narrow axis still has several labels. With ``unit``
    (its size in the axis's own units, e.g. 1000 for g/cm3 on a kg/m3 axis) the labels count
    that unit while the axis keeps its coordinates (so a region drawn on it stays in them)."""
    shift = math.log10(unit)
    low, high = low - shift, high - shift
    powers = list(range(math.floor(low), math.ceil(high) + 1))
    if high - low >= 3:
        powers = powers[::max(1, math.ceil(len(powers) / most))]
        return {"tickvals": [k + shift for k in powers],
                "ticktext": [f"10<sup>{k}</sup>" for k in powers]}
    vals, texts = [], []
    for k in powers:
        for m in (1, 2, 5):
            vals.append(k + math.log10(m) + shift)
            texts.append(f"10<sup>{k}</sup>" if m == 1 else f"{m}·10<sup>{k}</sup>")
    return {"tickvals": vals, "ticktext": texts}


def centres(edges: Sequence[float]) -> list[float]:
    """Bin centres of a list of edges."""
    return [(a + b) / 2 for a, b in pairwise(edges)]


def empty(title: str, why: str) -> Figure:
    """A figure with no data and a sentence saying why."""
    look = layout(title, "", "")
    look["annotations"] = [{"text": text(why), "showarrow": False, "xref": "paper",
                            "yref": "paper", "x": 0.5, "y": 0.5, "font": {"size": 15}}]
    return {"data": [], "layout": look}


def _hover(row: Flagged) -> str:
    """Hover text of a flagged body: id, label, severity, rule and message, all escaped."""
    return (f"<b>{text(row['body'])}</b><br>label: {text(row.get('label'))}<br>"
            f"{text(row['severity'])}: {text(row['rule'])}<br>{text(row.get('message'))}")


def flagged_traces(rows: Sequence[Flagged], ys: Sequence[float] | None = None,
                   axes: tuple[str, str] = ("x", "y")) -> list[Trace]:
    """One scatter trace per severity: flagged bodies at (x, y), or at ``ys`` when given."""
    traces = []
    for severity in SEVERITIES:
        picked = [(i, r) for i, r in enumerate(rows) if r["severity"] == severity]
        if not picked:
            continue
        colour, symbol = SEVERITY_STYLE[severity]
        traces.append({
            "type": "scatter", "mode": "markers", "meta": "flagged",
            "name": f"{severity} ({len(picked)})", "xaxis": axes[0], "yaxis": axes[1],
            "x": [r["x"] for _, r in picked],
            "y": [ys[i] if ys is not None else r.get("y") for i, r in picked],
            "customdata": [r["body"] for _, r in picked],
            "hovertext": [_hover(r) for _, r in picked],
            "hovertemplate": "%{hovertext}<extra></extra>",
            "marker": {"color": colour, "symbol": symbol, "size": 9,
                       "line": {"color": "#ffffff", "width": 1}},
        })
    return traces


def on_bars(rows: Sequence[Flagged], edges: Sequence[float], counts: Sequence[int]
            ) -> list[float]:
    """Heights that put flagged markers on top of their histogram bar, stacked when they share it.
    """
    top = max(counts) if counts and max(counts) > 0 else 1
    width = (edges[-1] - edges[0]) / len(counts)
    seen: dict[int, int] = {}
    ys = []
    for row in rows:
        index = min(max(int((row["x"] - edges[0]) / width), 0), len(counts) - 1)
        seen[index] = seen.get(index, 0) + 1
        ys.append(counts[index] + seen[index] * 0.04 * top)
    return ys


def bars(edges: Sequence[float], counts: Sequence[int], name: str, colour: str = ACCENT,
         axes: tuple[str, str] = ("x", "y")) -> Trace:
    """A histogram drawn as bars from precomputed counts."""
    width = (edges[-1] - edges[0]) / len(counts)
    return {"type": "bar", "name": text(name), "x": centres(edges), "y": list(counts),
            "width": [width] * len(counts), "xaxis": axes[0], "yaxis": axes[1],
            "marker": {"color": colour, "opacity": 0.75, "line": {"width": 0}},
            "hovertemplate": "10^%{x:.2f}: %{y} bodies<extra></extra>"}


def heatmap(diagram: Heatmap) -> Trace:
    """The 2-D density of bodies, coloured by log10 count; empty cells stay blank."""
    z = [[math.log10(n) if n > 0 else None for n in row] for row in diagram["z"]]
    counts = [[n or None for n in row] for row in diagram["z"]]
    return {"type": "heatmap", "name": "bodies", "x": diagram["x_edges"], "y": diagram["y_edges"],
            "z": z, "text": counts, "hovertemplate": "%{text} bodies<extra></extra>",
            "colorscale": [[0.0, "#e8eef3"], [1.0, ACCENT]], "showscale": True,
            "colorbar": {"title": {"text": "bodies"}, "tickvals": [0, 1, 2, 3, 4, 5, 6],
                         "ticktext": ["1", "10", "100", "10<sup>3</sup>", "10<sup>4</sup>",
                                      "10<sup>5</sup>", "10<sup>6</sup>"], "thickness": 12}}


def line(name: str, x: Sequence[float], y: Sequence[float], colour: str,
         dash: str = "solid") -> Trace:
    """A reference curve or line, marked ``meta: "reference"``."""
    return {"type": "scatter", "mode": "lines", "meta": "reference", "name": name, "x": list(x),
            "y": list(y), "line": {"color": colour, "width": 2, "dash": dash},
            "hoverinfo": "name"}


def proportional_lines(lines: Sequence[ProportionalLine], x0: float, x1: float) -> list[Trace]:
    """Lines y = c x across log-log axes from x0 to x1 (log10 units): y' = log10(c) + x'."""
    out = []
    for i, ref in enumerate(lines):
        c = ref["coefficient"]
        out.append(line(f"{ref['name']} (y = {'' if c == 1 else f'{c:.3g} '}x)", [x0, x1],
                        [math.log10(c) + x0, math.log10(c) + x1],
                        REFERENCE_COLOURS[i % len(REFERENCE_COLOURS)]))
    return out


def log_axes(look: dict[str, Any], diagram: Heatmap) -> dict[str, Any]:
    """``look`` with log ticks on both axes of a heatmap, marked as a plane (a region drawn on
    it spans x and y)."""
    look["xaxis"].update(log_ticks(diagram["x_edges"][0], diagram["x_edges"][-1]))
    look["yaxis"].update(log_ticks(diagram["y_edges"][0], diagram["y_edges"][-1]))
    look["meta"] = {"plane": True}
    return look
