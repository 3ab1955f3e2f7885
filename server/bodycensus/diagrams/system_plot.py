"""The to-scale drawing of a body's system for the Body screen, as plotly figure dicts.

Centred on the parent: its disc, the rigid and fluid Roche zones for this body's density, the
parent's Hill sphere, the parent's rings and the siblings' orbits, the body's orbit (an ellipse
with the parent at a focus), its own Hill sphere and its own rings. A ring's page is centred on
its planet. Each ring is named with the density its outer edge implies. Every outline is a polar
path, so the same drawing works on a linear scale and on a radial log scale (for systems that
span decades).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from typing import Any

from bodycensus.diagrams.plots import ACCENT, SEVERITY_STYLE, text
from bodycensus.diagrams.shapes import Figure
from bodycensus.science.physics.orbits import periapsis

Detail = Mapping[str, Any]  # a body detail as the API returns it (queries.body_detail)

Transform = Callable[[float], float]
_STEPS = 120
MAX_SIBLINGS = 40
LOG_WHEN_SPAN = 20.0  # largest / smallest distance drawn: beyond it the log drawing comes first


def _polar(radius: Callable[[float], float], f: Transform) -> tuple[list[float], list[float]]:
    """Points of a closed polar curve r(theta), each distance mapped through ``f``."""
    xs, ys = [], []
    for i in range(_STEPS + 1):
        theta = 2 * math.pi * i / _STEPS
        r = f(radius(theta))
        xs.append(_round(r * math.cos(theta)))
        ys.append(_round(r * math.sin(theta)))
    return xs, ys


def _round(value: float) -> float:
    """Four significant digits: plenty for a drawing, and a much smaller page."""
    return float(f"{value:.4g}")


def _drawn_eccentricity(e: float) -> float:
    """The eccentricity drawn: within [0, 0.99], so every orbit stays a closed ellipse."""
    return min(max(e, 0.0), 0.99)


def _orbit_radius(a: float, e: float) -> Callable[[float], float]:
    """Distance from the focus along an ellipse: a (1 - e^2) / (1 + e cos theta)."""
    e = _drawn_eccentricity(e)
    return lambda theta: a * (1 - e * e) / (1 + e * math.cos(theta))


def _circle(r: float) -> Callable[[float], float]:
    """A circle about the parent: the same distance in every direction."""
    return lambda _theta: r


def _around(cx: float, r: float, f: Transform) -> tuple[list[float], list[float]]:
    """A circle of radius r around the point (cx, 0), each point mapped radially through ``f``."""
    xs, ys = [], []
    for i in range(_STEPS + 1):
        theta = 2 * math.pi * i / _STEPS
        x, y = cx + r * math.cos(theta), r * math.sin(theta)
        d = math.hypot(x, y)
        scale = f(d) / d if d > 0 else 0.0
        xs.append(_round(x * scale))
        ys.append(_round(y * scale))
    return xs, ys


def _path(name: str, xy: tuple[list[float], list[float]], colour: str, fill: str | None = None,
          dash: str = "solid", meta: str = "reference") -> dict[str, Any]:
    """A closed outline (optionally filled) as a scatter trace."""
    trace = {"type": "scatter", "mode": "lines", "name": name, "meta": meta, "x": xy[0],
             "y": xy[1], "line": {"color": colour, "width": 1.5, "dash": dash},
             "hoverinfo": "name"}
    if fill:
        trace.update(fill="toself", fillcolor=fill)
    return trace


def _value(detail: Detail, name: str) -> float | None:
    """A field or derived quantity of the body (SI), or None."""
    fields = {f["field"]: f["value"] for f in detail.get("fields", [])}
    value = detail.get("derived", {}).get(name, fields.get(name))
    return float(value) if isinstance(value, int | float) and math.isfinite(value) else None


RING_COLOUR, RING_FILL = "#8c6d3f", "rgba(166,124,82,0.35)"
Ring = tuple[str, float | None, float, float | None]  # owner, inner edge, outer edge, implied


def _ring_of(row: Detail) -> Ring | None:
    """The ring a relative row is or carries (edges in m), or None."""
    outer = row.get("ring_outer_edge")
    if not isinstance(outer, int | float) or not math.isfinite(outer):
        return None
    return (str(row.get("id")), row.get("ring_inner_edge"), float(outer),
            row.get("ring_implied_density"))


def _centred_rings(detail: Detail) -> list[Ring]:
    """Rings about the drawing's centre: the parent's own, the siblings that are rings, and the
    body itself when it is a ring."""
    system = detail.get("system") or {}
    rows = [system.get("parent") or {}, *(system.get("siblings") or [])[:MAX_SIBLINGS]]
    rings = [ring for row in rows if (ring := _ring_of(row)) is not None]
    if _is_ring(detail) and (own := _own_ring(detail)) is not None:
        rings.append(own)
    return rings


def _own_ring(detail: Detail) -> Ring | None:
    """The ring the body is or carries, from its derived quantities."""
    outer = _value(detail, "ring_outer_edge")
    if outer is None:
        return None
    return (str(detail.get("id")), _value(detail, "ring_inner_edge"), outer,
            _value(detail, "ring_implied_density"))


def _is_ring(detail: Detail) -> bool:
    """Whether the body is a ring (of the ring family)."""
    return any(f.get("field") == "family" and f.get("value") == "ring"
               for f in detail.get("fields", []))


def _ring_trace(ring: Ring, outline: Callable[[float], tuple[list[float], list[float]]]
                ) -> dict[str, Any]:
    """A ring as a filled annulus (outer edge round, inner edge back), named with its edges and
    the density its outer edge implies."""
    owner, inner, outer, implied = ring
    xo, yo = outline(outer)
    xi, yi = outline(inner) if inner else ([], [])
    density = f", implied density {implied:,.0f} kg/m³" if implied else ""
    span = f"{inner / 1e3:,.0f}–{outer / 1e3:,.0f} km" if inner else f"to {outer / 1e3:,.0f} km"
    return _path(f"ring of {text(owner)}: {span}{density}", (xo + xi[::-1], yo + yi[::-1]),
                 RING_COLOUR, RING_FILL, meta="ring")


def _traces(detail: Detail, f: Transform, radius: float) -> list[dict[str, Any]]:
    """Every outline of the drawing, mapped through ``f``."""
    system = detail.get("system") or {}
    parent = system.get("parent") or {}
    traces = []
    for name, key, line, fill in (
            ("fluid Roche zone", "roche_fluid", "#d35400", "rgba(211,84,0,0.10)"),
            ("rigid Roche zone", "roche_rigid", "#c0392b", "rgba(192,57,43,0.18)")):
        if (r := _value(detail, key)) is not None:
            traces.append(_path(name, _polar(_circle(r), f), line, fill))
    traces.append(_path(f"parent {text(parent.get('id'))}", _polar(_circle(radius), f),
                        "#555555", "rgba(120,120,120,0.35)", meta="parent"))
    if (r := _value(detail, "parent_hill_radius")) is not None:
        traces.append(_path("parent's Hill sphere", _polar(_circle(r), f), "#1b7837",
                            dash="dash"))
    traces += [_ring_trace(ring, lambda r: _polar(_circle(r), f))
               for ring in _centred_rings(detail)]
    for sib in (system.get("siblings") or [])[:MAX_SIBLINGS]:
        if sib.get("semi_major_axis"):
            xy = _polar(_orbit_radius(sib["semi_major_axis"], sib.get("eccentricity") or 0.0), f)
            traces.append({**_path(f"orbit of {text(sib['id'])}", xy, "#bbbbbb", meta="sibling"),
                           "showlegend": False})
    traces += _body_traces(detail, f)
    return traces


def _body_traces(detail: Detail, f: Transform) -> list[dict[str, Any]]:
    """The body's orbit, its position at periapsis and its own Hill sphere."""
    a, e = _value(detail, "semi_major_axis"), _value(detail, "eccentricity") or 0.0
    if a is None:
        return []
    worst = (detail.get("findings") or [{}])[0].get("severity")
    colour = SEVERITY_STYLE[worst][0] if worst in SEVERITY_STYLE else ACCENT
    traces = [_path(f"orbit of {text(detail['id'])}", _polar(_orbit_radius(a, e), f), colour,
                    meta="orbit")]
    peri = float(periapsis(a, _drawn_eccentricity(e)))
    if (hill := _value(detail, "hill_radius")) is not None:
        traces.append(_path("its Hill sphere", _around(peri, hill, f), colour, dash="dot"))
    if not _is_ring(detail) and (own := _own_ring(detail)) is not None:
        traces.append(_ring_trace(own, lambda r: _around(peri, r, f)))
    traces.append({"type": "scatter", "mode": "markers",
                   "name": f"{text(detail['id'])} at periapsis", "meta": "body",
                   "x": [f(peri)], "y": [0.0], "hoverinfo": "name",
                   "marker": {"color": colour, "size": 10, "symbol": "circle"}})
    return traces


def system_figures(detail: Detail) -> tuple[dict[str, Figure], str, str]:
    """Linear and log drawings of the body's system, which one to show first, and a caption."""
    parent = (detail.get("system") or {}).get("parent") or {}
    radius = _value(detail, "parent_radius") or parent.get("radius")
    drawn = _value(detail, "semi_major_axis") is not None or (
        _is_ring(detail) and _own_ring(detail) is not None)
    if not radius or not drawn:
        return {}, "", ""
    siblings = (detail.get("system") or {}).get("siblings") or []
    extents = [v for k in ("apoapsis", "parent_hill_radius", "roche_fluid", "semi_major_axis")
               if (v := _value(detail, k)) is not None]
    extents += [s["semi_major_axis"] for s in siblings[:MAX_SIBLINGS] if s.get("semi_major_axis")]
    extents += [ring[2] for ring in _centred_rings(detail)]
    nearest = min(radius, _value(detail, "periapsis") or radius)
    span = max(extents) / nearest
    scales: dict[str, Transform] = {
        "linear": lambda r: r / radius,
        "log": lambda r: max(0.0, 1.0 + math.log10(max(r, 1e-300) / radius)),
    }
    titles = {"linear": "distance (parent radii)",
              "log": "1 + log<sub>10</sub>(distance / parent radius)"}
    figures: dict[str, Figure] = {
        key: {"data": _traces(detail, f, radius), "layout": _layout(titles[key])}
        for key, f in scales.items()}
    caption = ("Centred on the parent. Shaded: inside the rigid (darker) and fluid Roche limits "
               "for this body's density; dashed: the parent's Hill sphere; dotted: the body's "
               "Hill sphere; grey: sibling orbits; brown: rings, each named with the density its "
               "outer edge implies (the material whose fluid Roche limit lies there). On the log "
               "scale distances are mapped radially, so shapes are kept only along each "
               "direction.")
    return figures, "log" if span > LOG_WHEN_SPAN else "linear", caption


def _layout(axis_title: str) -> dict[str, Any]:
    """Equal-aspect axes on a light background."""
    axis = {"title": {"text": axis_title}, "gridcolor": "#e3e3e3", "zeroline": False}
    return {"height": 560, "margin": {"l": 60, "r": 20, "t": 20, "b": 110},
            "paper_bgcolor": "#ffffff", "plot_bgcolor": "#fafafa",
            "font": {"family": "system-ui, 'Segoe UI', Helvetica, Arial, sans-serif", "size": 13},
            "xaxis": axis, "yaxis": {**axis, "scaleanchor": "x", "scaleratio": 1},
            "legend": {"orientation": "h", "y": -0.14, "yanchor": "top"}}
