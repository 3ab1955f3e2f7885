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
from bodycensus.science.display_units import (
    DISPLAY_UNITS,
    FAMILY_UNITS,
    FIELD_QUANTITIES,
    symbol,
)

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
    """Histogram of one numeric field: of one label, or one panel per label (small multiples
    on a shared x axis), each with its artefacts marked and named."""
    if not diagram or not diagram["fields"]:
        return empty("Distributions", "No numeric field has values.")
    field = choice.field if choice.field in diagram["fields"] else next(iter(diagram["fields"]))
    label, spec = choice.label, diagram["fields"][field]
    series = [s for s in spec["series"] if label in (None, "", s["label"])]
    if not series:
        return empty(f"Distribution of {field}", "No label has values of this field.")
    panels = [(s, _artefacts_of(diagram, field, s["label"])) for s in series]
    low, high = _occupied(spec["edges"], series, [a for _, arts in panels for a in arts],
                          spec["log"])
    family = diagram["families"].get(series[0]["label"]) if label else None
    unit = _axis_unit(field, family, spec, (low + high) / 2)
    title = f"Distribution of {field}" + (f" for {text(label)}" if label else
                                          f": {len(panels)} labels, one panel each")
    look = layout(title, f"{field}{f' ({symbol(unit)})' if symbol(unit) else ''}", "bodies")
    data: list[dict[str, Any]] = []
    shapes: list[dict[str, Any]] = []
    columns = 1 if len(panels) == 1 else PANEL_COLUMNS
    rows = math.ceil(len(panels) / columns)
    for i, (one, arts) in enumerate(panels):
        x, y = ("x", "y") if i == 0 else (f"x{i + 1}", f"y{i + 1}")
        data.append({**_step(spec["edges"], one, 0), "xaxis": x, "yaxis": y,
                     "showlegend": i == 0, "legendgroup": "bodies",
                     "name": "bodies" if len(panels) > 1 else text(one["label"])})
        top = max(one["counts"]) or 1
        panel_shapes, marks = _artefact_marks(arts, spec["log"], top, one["label"], (x, y))
        shapes += panel_shapes
        data += marks  # each spike in the legend, named with its label
        _place_axes(look, i, rows, columns, (low, high), spec, unit, one["label"],
                    len(panels) > 1)
    if len(panels) > 1:  # the shared x axis is named once, under the bottom-left panel
        bottom_left = (rows - 1) * columns
        name = look["xaxis"]["title"]["text"] if "title" in look["xaxis"] else field
        for i in range(len(panels)):
            key = "xaxis" if i == 0 else f"xaxis{i + 1}"
            look[key]["title"] = {"text": name if i == bottom_left else ""}
    look["shapes"] = shapes
    if len(panels) > 1:
        look["height"] = max(560, PANEL_HEIGHT * rows + 170)
        look["legend"] = {"orientation": "h", "x": 1.0, "xanchor": "right", "y": 1.0,
                          "yanchor": "bottom"}
    return {"data": data, "layout": look}


PANEL_COLUMNS = 4
PANEL_HEIGHT = 190  # px per row of panels


def _artefacts_of(diagram: DistributionsAggregate, field: str, label: str) -> list[Artefact]:
    """The artefacts of one label in a field: its own and its family's."""
    family = diagram["families"].get(label)
    own = [a for a in diagram["artefacts"] if a["field"] == field and a["scope"] == "label"
           and a["label"] == label]
    places = {(a["kind"], a.get("at"), a.get("low"), a.get("high")) for a in own}
    wide = [a for a in diagram["artefacts"] if a["field"] == field and a["scope"] == "family"
            and a["label"] == family and _near(a, places) is False]
    return own + wide


def _near(artefact: Artefact, places: set[tuple[Any, ...]]) -> bool:
    """Whether a family-wide artefact is its label's own at the same place (shown once)."""
    def same(a: float | None, b: float | None) -> bool:
        return a == b or (a is not None and b is not None and math.isclose(a, b, rel_tol=1e-6))
    return any(kind == artefact["kind"] and same(at, artefact.get("at"))
               and same(low, artefact.get("low")) and same(high, artefact.get("high"))
               for kind, at, low, high in places)


def _axis_unit(field: str, family: str | None, spec: FieldHistogram, middle: float) -> str:
    """The unit the x axis counts in: the label's family's, else by the size of the values."""
    quantity = FIELD_QUANTITIES.get(field)
    if quantity is None:
        return spec.get("unit") or ""
    size = 10.0 ** middle if spec["log"] else middle
    return FAMILY_UNITS.unit(quantity, family, size)


def _place_axes(look: dict[str, Any], i: int, rows: int, columns: int,
                span: tuple[float, float], spec: FieldHistogram, unit: str, label: str,
                multiple: bool) -> None:
    """The axes of panel ``i``: its domain in the grid, the shared x range and ticks (in
    ``unit``), and the label as the panel's title."""
    suffix = "" if i == 0 else str(i + 1)
    row, column = divmod(i, columns)
    gap_x, gap_y = 0.04, 60.0 / (PANEL_HEIGHT * max(rows, 1))  # ~60 px between rows
    width, height = 1.0 / columns, 1.0 / rows
    x_domain = [column * width + (gap_x if column else 0.0), (column + 1) * width - gap_x / 2]
    y_domain = [1.0 - (row + 1) * height + gap_y, 1.0 - row * height - gap_y / 2]
    factor = DISPLAY_UNITS[unit].to_si if unit in DISPLAY_UNITS else 1.0
    x_axis: dict[str, Any] = {"range": list(span), "gridcolor": "#e3e3e3", "zeroline": False,
                              "anchor": f"y{suffix}"}
    if spec["log"]:
        x_axis.update(log_ticks(*span, factor, most=4 if multiple else 10))
    if multiple:
        x_axis["domain"] = x_domain
        if i:
            x_axis["matches"] = "x"
        look[f"yaxis{suffix}"] = {"domain": y_domain, "anchor": f"x{suffix}",
                                  "gridcolor": "#e3e3e3", "zeroline": False}
        look.setdefault("annotations", []).append(
            {"text": text(label), "xref": f"x{suffix} domain", "yref": f"y{suffix} domain",
             "x": 0.0, "y": 1.0, "xanchor": "left", "yanchor": "bottom", "showarrow": False,
             "font": {"size": 12}})
    look[f"xaxis{suffix}"] = {**look.get(f"xaxis{suffix}", {}), **x_axis}


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


def _artefact_marks(artefacts: list[Artefact], log: bool, top: float, label: str,
                    axes: tuple[str, str] = ("x", "y")
                    ) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """Shapes (a line at a cutoff, a band for a gap) and spike markers for the artefacts of
    ``label``'s panel, each named with the label (or family) it was found in."""
    def pos(value: float | None) -> float | None:
        if value is None:
            return None
        return math.log10(value) if log and value > 0 else (None if log else value)

    colour = SEVERITY_STYLE["suspect"][0]
    x_ref, y_ref = axes[0], f"{axes[1]} domain"
    shapes, spikes = [], []
    for a in artefacts:
        at, low, high = pos(a.get("at")), pos(a.get("low")), pos(a.get("high"))
        where = (f"{text(a['label'])}" if a["scope"] == "label" else
                 f"family {text(a['label'])}")
        if a["kind"] == "cutoff" and at is not None:
            shapes.append({"type": "line", "xref": x_ref, "yref": y_ref, "x0": at, "x1": at,
                           "y0": 0, "y1": 1, "name": "cutoff",
                           "label": {"text": f"cutoff ({where})", "textangle": -90,
                                     "font": {"size": 10, "color": colour},
                                     "textposition": "end", "yanchor": "top"},
                           "line": {"color": colour, "width": 2}})
        elif a["kind"] == "gap" and low is not None and high is not None:
            shapes.append({"type": "rect", "xref": x_ref, "yref": y_ref, "x0": low, "x1": high,
                           "y0": 0, "y1": 1, "name": "gap",
                           "label": {"text": f"gap ({where})", "font": {"size": 10},
                                     "textposition": "top center"},
                           "line": {"width": 0}, "fillcolor": colour, "opacity": 0.15})
        elif a["kind"] == "spike" and at is not None:
            spikes.append((at, a, where))
    marks = [{"type": "scatter", "mode": "markers+text", "meta": "artefact",
              "name": f"spike in {text(label)}", "xaxis": axes[0], "yaxis": axes[1],
              "x": [s[0] for s in spikes], "y": [top * 0.9] * len(spikes),
              "text": [f"spike ({w})" for _, _, w in spikes], "textposition": "middle right",
              "textfont": {"size": 10, "color": colour},
              "hovertext": [f"spike in {w}: {text(a.get('evidence'))}" for _, a, w in spikes],
              "hovertemplate": "%{hovertext}<extra></extra>",
              "marker": {"symbol": "star", "size": 13, "color": colour}}]
    return shapes, marks if spikes else []
