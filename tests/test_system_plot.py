"""The to-scale drawing of a body's system: distances in parent radii, the body at periapsis
a(1 - e) (from the physics module), its orbit an ellipse with the parent at a focus."""

from __future__ import annotations

from typing import Any

import pytest

from bodycensus.diagrams.plots import SEVERITY_STYLE
from bodycensus.diagrams.system_plot import system_figures
from bodycensus.science.physics import orbits

R_PARENT = 7.0e7  # m, about Jupiter's radius


def _detail(a: float, e: float, **derived: float) -> dict[str, Any]:
    """A body detail as the API returns it, for a moon of a Jupiter-sized parent."""
    return {"id": "moon-1", "findings": [{"severity": "impossible"}],
            "fields": [{"field": "semi_major_axis", "value": a},
                       {"field": "eccentricity", "value": e}],
            "derived": {"parent_radius": R_PARENT, **derived},
            "system": {"parent": {"id": "giant", "radius": R_PARENT}, "siblings": []}}


def _trace(figure: dict[str, Any], meta: str) -> dict[str, Any]:
    return next(t for t in figure["data"] if t.get("meta") == meta)


def test_the_body_sits_at_its_periapsis() -> None:
    a, e = 3.0 * R_PARENT, 0.2
    figures, _, _ = system_figures(_detail(a, e))
    body = _trace(figures["linear"], "body")
    assert body["x"] == [pytest.approx(orbits.periapsis(a, e) / R_PARENT)]  # 2.4 parent radii
    assert body["x"][0] == pytest.approx(2.4)


def test_the_orbit_is_an_ellipse_about_the_parent_at_a_focus() -> None:
    a, e = 3.0 * R_PARENT, 0.2
    orbit = _trace(system_figures(_detail(a, e))[0]["linear"], "orbit")
    assert max(orbit["x"]) == pytest.approx(2.4, rel=1e-3)  # periapsis a(1 - e)
    assert min(orbit["x"]) == pytest.approx(-3.6, rel=1e-3)  # apoapsis a(1 + e)
    assert orbit["line"]["color"] == SEVERITY_STYLE["impossible"][0]  # its worst finding


def test_an_unbound_eccentricity_is_drawn_as_a_closed_orbit() -> None:
    figures, _, _ = system_figures(_detail(3.0 * R_PARENT, 1.5))
    body = _trace(figures["linear"], "body")
    assert body["x"][0] == pytest.approx(3.0 * (1 - 0.99))  # drawn at e = 0.99


def test_roche_zones_and_hill_spheres_are_drawn_when_known() -> None:
    detail = _detail(3.0 * R_PARENT, 0.0, roche_rigid=1.5 * R_PARENT, roche_fluid=2.9 * R_PARENT,
                     parent_hill_radius=400 * R_PARENT, hill_radius=0.1 * R_PARENT)
    names = {t["name"] for t in system_figures(detail)[0]["linear"]["data"]}
    assert {"rigid Roche zone", "fluid Roche zone", "parent's Hill sphere",
            "its Hill sphere"} <= names
    rigid = next(t for t in system_figures(detail)[0]["linear"]["data"]
                 if t["name"] == "rigid Roche zone")
    assert max(rigid["x"]) == pytest.approx(1.5)


def test_the_log_drawing_comes_first_when_the_system_spans_decades() -> None:
    near = _detail(3.0 * R_PARENT, 0.0)
    far = _detail(3.0 * R_PARENT, 0.0, parent_hill_radius=400 * R_PARENT)
    assert system_figures(near)[1] == "linear"
    assert system_figures(far)[1] == "log"


def test_nothing_to_draw_without_a_parent_radius_or_an_orbit() -> None:
    no_parent = {**_detail(3.0 * R_PARENT, 0.0), "derived": {}, "system": {"parent": None}}
    assert system_figures(no_parent) == ({}, "", "")
    no_orbit = {**_detail(3.0 * R_PARENT, 0.0), "fields": []}
    assert system_figures(no_orbit) == ({}, "", "")
