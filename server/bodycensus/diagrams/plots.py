"""Plotly figure dicts for the dashboard diagrams, built from aggregates (never from raw rows).

Each function is pure: aggregates dict in, ``{"data": [...], "layout": {...}}`` out. Traces carry
``meta``: ``"reference"`` (published limits and curves), ``"flagged"`` (bodies drawn on top, with
the body id in ``customdata`` so a click opens it), ``"artefact"`` (spikes). Catalogue text shown
by plotly (labels, messages) is HTML-escaped, because plotly renders a subset of HTML.
"""

from __future__ import annotations

import html
import math
from itertools import pairwise
from typing import Any

from bodycensus.diagrams.aggregates import SEVERITIES

PLOTS: tuple[str, ...] = ("density", "mass-radius", "roche", "orbits", "distributions")
ACCENT = "#1d5f8a"
# Colour AND marker shape per severity, so the two cues agree on screen and in greyscale print.
SEVERITY_STYLE: dict[str, tuple[str, str]] = {
    "error": ("#5e3c99", "x"),
    "impossible": ("#c0392b", "diamond"),
    "unstable": ("#d35400", "triangle-up"),
    "suspect": ("#8a7a00", "circle"),
    "note": ("#2c7fb8", "square"),
}
REFERENCE_COLOURS = ("#333333", "#b35806", "#1b7837", "#762a83", "#666666")
Figure = dict[str, Any]


def text(value: Any) -> str:
    """Catalogue data as plotly-safe text: ``< > &`` escaped so a label shows as typed (plotly
    decodes only a few entities, and not ``&quot;``, so quotes stay as they are)."""
    return html.escape("" if value is None else str(value), quote=False)


def _layout(title: str, x_title: str, y_title: str, **extra: Any) -> dict[str, Any]:
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


def log_ticks(low: float, high: float) -> dict[str, Any]:
    """Ticks for an axis in log10 units: powers of ten (10^k), plus 2 and 5 x 10^k when the
    axis spans under three decades, so a narrow axis still has several labels."""
    powers = list(range(math.floor(low), math.ceil(high) + 1))
    if high - low >= 3:
        powers = powers[::max(1, len(powers) // 10)]
        return {"tickvals": powers, "ticktext": [f"10<sup>{k}</sup>" for k in powers]}
    vals, texts = [], []
    for k in powers:
        for m in (1, 2, 5):
            vals.append(k + math.log10(m))
            texts.append(f"10<sup>{k}</sup>" if m == 1 else f"{m}·10<sup>{k}</sup>")
    return {"tickvals": vals, "ticktext": texts}


def centres(edges: list[float]) -> list[float]:
    """Bin centres of a list of edges."""
    return [(a + b) / 2 for a, b in pairwise(edges)]


def _empty(title: str, why: str) -> Figure:
    """A figure with no data and a sentence saying why."""
    layout = _layout(title, "", "")
    layout["annotations"] = [{"text": text(why), "showarrow": False, "xref": "paper",
                              "yref": "paper", "x": 0.5, "y": 0.5, "font": {"size": 15}}]
    return {"data": [], "layout": layout}


def _hover(row: dict[str, Any]) -> str:
    """Hover text of a flagged body: id, label, severity, rule and message, all escaped."""
    return (f"<b>{text(row['body'])}</b><br>label: {text(row.get('label'))}<br>"
            f"{text(row['severity'])}: {text(row['rule'])}<br>{text(row.get('message'))}")


def flagged_traces(rows: list[dict[str, Any]], ys: list[float] | None = None,
                   axes: tuple[str, str] = ("x", "y")) -> list[dict[str, Any]]:
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
            "y": [ys[i] if ys is not None else r["y"] for i, r in picked],
            "customdata": [r["body"] for _, r in picked],
            "hovertext": [_hover(r) for _, r in picked],
            "hovertemplate": "%{hovertext}<extra></extra>",
            "marker": {"color": colour, "symbol": symbol, "size": 9,
                       "line": {"color": "#ffffff", "width": 1}},
        })
    return traces


def _on_bars(rows: list[dict[str, Any]], edges: list[float], counts: list[int]) -> list[float]:
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


def _bars(edges: list[float], counts: list[int], name: str, colour: str = ACCENT,
          axes: tuple[str, str] = ("x", "y")) -> dict[str, Any]:
    """A histogram drawn as bars from precomputed counts."""
    width = (edges[-1] - edges[0]) / len(counts)
    return {"type": "bar", "name": text(name), "x": centres(edges), "y": counts,
            "width": [width] * len(counts), "xaxis": axes[0], "yaxis": axes[1],
            "marker": {"color": colour, "opacity": 0.75, "line": {"width": 0}},
            "hovertemplate": "10^%{x:.2f}: %{y} bodies<extra></extra>"}


def density_figure(aggs: dict[str, Any], label: str | None = None) -> Figure:
    """Density histogram of one label (log axis) with its family's plausible band shaded."""
    diagram = aggs.get("density")
    if not diagram or not diagram["series"]:
        return _empty("Density", "No body has both a mass and a radius.")
    series = next((s for s in diagram["series"] if s["label"] == label), diagram["series"][0])
    edges = series["edges"]
    flagged = [r for r in diagram["flagged"] if r.get("label") == series["label"]]
    data = [_bars(edges, series["counts"], series["label"])]
    data += flagged_traces(flagged, _on_bars(flagged, edges, series["counts"]))
    layout = _layout(f"Density of {text(series['label'])} (family {text(series['family'])})",
                     "bulk density (kg m<sup>-3</sup>)", "bodies", bargap=0)
    layout["xaxis"].update(log_ticks(edges[0], edges[-1]))
    if series["band"]:
        layout["shapes"] = [_band_shape(*series["band"])]
        layout["annotations"] = [_band_note(series)]
    return {"data": data, "layout": layout}


def _band_shape(low: float, high: float) -> dict[str, Any]:
    """A shaded vertical band between two x values (data units) across the whole height."""
    return {"type": "rect", "xref": "x", "yref": "paper", "x0": low, "x1": high, "y0": 0, "y1": 1,
            "fillcolor": ACCENT, "opacity": 0.12, "line": {"width": 0}, "layer": "below",
            "name": "plausible band"}


def _band_note(series: dict[str, Any]) -> dict[str, Any]:
    """The caption of the plausible band: which family and at which mass it is evaluated."""
    mass = series.get("median_mass")
    at = f" at the median mass {mass:.3g} kg" if mass else ""
    return {"text": f"shaded: plausible density for family {text(series['family'])}{at}",
            "xref": "paper", "yref": "paper", "x": 1.0, "y": 1.0, "xanchor": "right",
            "yanchor": "bottom", "showarrow": False, "font": {"size": 11, "color": "#555"}}


def _heatmap(diagram: dict[str, Any]) -> dict[str, Any]:
    """The 2-D density of bodies, coloured by log10 count; empty cells stay blank."""
    z = [[math.log10(n) if n > 0 else None for n in row] for row in diagram["z"]]
    counts = [[n or None for n in row] for row in diagram["z"]]
    return {"type": "heatmap", "name": "bodies", "x": diagram["x_edges"], "y": diagram["y_edges"],
            "z": z, "text": counts, "hovertemplate": "%{text} bodies<extra></extra>",
            "colorscale": [[0.0, "#e8eef3"], [1.0, ACCENT]], "showscale": True,
            "colorbar": {"title": {"text": "bodies"}, "tickvals": [0, 1, 2, 3, 4, 5, 6],
                         "ticktext": ["1", "10", "100", "10<sup>3</sup>", "10<sup>4</sup>",
                                      "10<sup>5</sup>", "10<sup>6</sup>"], "thickness": 12}}


def _line(name: str, x: list[float], y: list[float], colour: str,
          dash: str = "solid") -> dict[str, Any]:
    """A reference curve or line, marked ``meta: "reference"``."""
    return {"type": "scatter", "mode": "lines", "meta": "reference", "name": name, "x": x, "y": y,
            "line": {"color": colour, "width": 2, "dash": dash}, "hoverinfo": "name"}


def mass_radius_figure(aggs: dict[str, Any]) -> Figure:
    """Mass-radius diagram (log-log): 2-D density with iron, rock, water-ice and cold H/He curves.
    """
    diagram = aggs.get("mass_radius")
    if not diagram:
        return _empty("Mass and radius", "No body has both a mass and a radius.")
    data = [_heatmap(diagram)]
    for i, curve in enumerate(diagram["curves"]):
        data.append(_line(f"{curve['name']} (composition curve)", curve["x"], curve["y"],
                          REFERENCE_COLOURS[i % len(REFERENCE_COLOURS)]))
    data += flagged_traces(diagram["flagged"])
    layout = _layout("Mass and radius", "mass (Earth masses)", "radius (Earth radii)")
    layout["xaxis"].update(log_ticks(diagram["x_edges"][0], diagram["x_edges"][-1]))
    layout["yaxis"].update(log_ticks(diagram["y_edges"][0], diagram["y_edges"][-1]))
    return {"data": data, "layout": layout}


def roche_figure(aggs: dict[str, Any]) -> Figure:
    """The Roche plane: (parent density / density)^(1/3) against periapsis / parent radius."""
    diagram = aggs.get("roche")
    if not diagram:
        return _empty("Roche plane", "No orbiting body has densities for itself and its parent.")
    x0, x1 = diagram["x_edges"][0], diagram["x_edges"][-1]
    data = [_heatmap(diagram)]
    for i, line in enumerate(diagram["lines"]):
        c = line["coefficient"]
        data.append(_line(f"{line['name']} (y = {c:.2f} x)", [x0, x1],
                          [math.log10(c) + x0, math.log10(c) + x1], REFERENCE_COLOURS[i]))
    data.append(_line("parent surface (y = 1)", [x0, x1], [0.0, 0.0], "#666666", "dot"))
    data += flagged_traces(diagram["flagged"])
    layout = _layout("Roche plane: below a line the body is inside that Roche limit",
                     "(parent density / body density)<sup>1/3</sup>",
                     "periapsis / parent radius")
    layout["xaxis"].update(log_ticks(x0, x1))
    layout["yaxis"].update(log_ticks(diagram["y_edges"][0], diagram["y_edges"][-1]))
    return {"data": data, "layout": layout}


def _margin_panel(diagram: dict[str, Any] | None, axes: tuple[str, str],
                  name: str) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """Bars, reference lines (as traces) and flagged bodies of one orbit-margin histogram."""
    if not diagram:
        return [], []
    edges, counts = diagram["edges"], diagram["counts"]
    data = [_bars(edges, counts, name, axes=axes)]
    top = max(counts) if counts else 1
    for i, line in enumerate(diagram["lines"]):
        trace = _line(line["name"], [line["at"], line["at"]], [0, top * 1.1],
                      REFERENCE_COLOURS[i + 1], "dash")
        data.append({**trace, "xaxis": axes[0], "yaxis": axes[1]})
    data += flagged_traces(diagram["flagged"], _on_bars(diagram["flagged"], edges, counts), axes)
    return data, [{"edges": edges}]


def orbits_figure(aggs: dict[str, Any]) -> Figure:
    """Orbit margins side by side: apoapsis / Hill radius (log) and the Kepler period residual
    in per cent (linear)."""
    hill, hill_axes = _margin_panel(aggs.get("hill"), ("x", "y"), "apoapsis / Hill radius")
    kepler, _ = _margin_panel(aggs.get("kepler"), ("x2", "y2"),
                              "period residual (%)")
    if not hill and not kepler:
        return _empty("Orbit margins", "No orbiting body has the fields these margins need.")
    layout = _layout("Orbit margins", "apoapsis / parent's Hill radius", "bodies", bargap=0)
    layout["xaxis"]["domain"] = [0.0, 0.46]
    layout["xaxis2"] = {"domain": [0.54, 1.0], "anchor": "y2", "gridcolor": "#e3e3e3",
                        "title": {"text": "period / Kepler period - 1 (%); beyond +-10 % at the "
                                          "ends"}}
    layout["yaxis2"] = {"anchor": "x2", "gridcolor": "#e3e3e3", "title": {"text": "bodies"}}
    if hill_axes:
        layout["xaxis"].update(log_ticks(hill_axes[0]["edges"][0], hill_axes[0]["edges"][-1]))
    return {"data": hill + kepler, "layout": layout}


def distribution_figure(aggs: dict[str, Any], field: str | None = None,
                        label: str | None = None) -> Figure:
    """Histogram of one numeric field per label (step lines), with its artefacts marked."""
    fields = aggs.get("distributions", {}).get("fields", {})
    if not fields:
        return _empty("Distributions", "No numeric field has values.")
    field = field if field in fields else next(iter(fields))
    spec = fields[field]
    series = [s for s in spec["series"] if label in (None, "", s["label"])]
    data = [_step(spec["edges"], s, i) for i, s in enumerate(series)]
    shown = {s["label"] for s in series}
    families = {lb["family"] for lb in aggs.get("labels", []) if lb["label"] in shown}
    artefacts = [a for a in aggs["distributions"]["artefacts"] if a["field"] == field and
                 a["label"] in (families if a["scope"] == "family" else shown)]
    top = max((max(s["counts"]) for s in series), default=1)
    shapes, marks = _artefact_marks(artefacts, spec["log"], top)
    unit = f" ({spec['unit']})" if spec.get("unit") not in (None, "", "1") else ""
    layout = _layout(f"Distribution of {field}" + (f" for {text(label)}" if label else ""),
                     f"{field}{unit}", "bodies", shapes=shapes)
    low, high = _occupied(spec["edges"], series, artefacts, spec["log"])
    layout["xaxis"]["range"] = [low, high]
    if spec["log"]:
        layout["xaxis"].update(log_ticks(low, high))
    return {"data": data + marks, "layout": layout}


def _occupied(edges: list[float], series: list[dict[str, Any]], artefacts: list[dict[str, Any]],
              log: bool) -> tuple[float, float]:
    """The x range holding the shown labels' values and their artefacts, with a bin of margin."""
    used = [i for s in series for i, n in enumerate(s["counts"]) if n]
    if not used:
        return edges[0], edges[-1]
    width = edges[1] - edges[0]
    low, high = edges[min(used)] - width, edges[max(used) + 1] + width
    for a in artefacts:
        for key in ("at", "low", "high"):
            value = a.get(key)
            if value is not None and (value > 0 or not log):
                x = math.log10(value) if log else value
                low, high = min(low, x - width), max(high, x + width)
    return low, high


def _step(edges: list[float], series: dict[str, Any], i: int) -> dict[str, Any]:
    """One label's histogram as a step line, so many labels can share the axes."""
    palette = (ACCENT, "#7f7f7f", "#b35806", "#1b7837", "#762a83", "#8c510a", "#01665e")
    return {"type": "scatter", "mode": "lines", "name": text(series["label"]),
            "x": centres(edges), "y": series["counts"],
            "line": {"shape": "hvh", "width": 1.6, "color": palette[i % len(palette)]},
            "hovertemplate": f"{text(series['label'])}: %{{y}} bodies<extra></extra>"}


def _artefact_marks(artefacts: list[dict[str, Any]], log: bool,
                    top: float) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """Shapes (a line at a cutoff, a band for a gap) and spike markers for the artefacts."""
    def pos(value: float | None) -> float | None:
        if value is None:
            return None
        return math.log10(value) if log and value > 0 else (None if log else value)

    shapes, spikes = [], []
    for a in artefacts:
        at, low, high = pos(a.get("at")), pos(a.get("low")), pos(a.get("high"))
        if a["kind"] == "cutoff" and at is not None:
            shapes.append({"type": "line", "xref": "x", "yref": "paper", "x0": at, "x1": at,
                           "y0": 0, "y1": 1, "name": "cutoff",
                           "line": {"color": SEVERITY_STYLE["suspect"][0], "width": 2}})
        elif a["kind"] == "gap" and low is not None and high is not None:
            shapes.append({"type": "rect", "xref": "x", "yref": "paper", "x0": low, "x1": high,
                           "y0": 0, "y1": 1, "name": "gap", "line": {"width": 0},
                           "fillcolor": SEVERITY_STYLE["suspect"][0], "opacity": 0.15})
        elif a["kind"] == "spike" and at is not None:
            spikes.append((at, a))
    marks = [{"type": "scatter", "mode": "markers", "meta": "artefact", "name": "spike",
              "x": [s[0] for s in spikes], "y": [top * 1.05] * len(spikes),
              "hovertext": [f"spike in {text(a['label'])}: {text(a.get('evidence'))}"
                            for _, a in spikes], "hovertemplate": "%{hovertext}<extra></extra>",
              "marker": {"symbol": "star", "size": 13, "color": SEVERITY_STYLE["suspect"][0]}}]
    return shapes, marks if spikes else []


def figure_for(aggs: dict[str, Any], plot: str, label: str | None = None,
               field: str | None = None) -> Figure:
    """The figure of the named diagram (one of PLOTS)."""
    if plot == "mass-radius":
        return mass_radius_figure(aggs)
    if plot == "roche":
        return roche_figure(aggs)
    if plot == "orbits":
        return orbits_figure(aggs)
    if plot == "distributions":
        return distribution_figure(aggs, field, label)
    return density_figure(aggs, label)
