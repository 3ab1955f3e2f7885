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


def _ring_row(ring_id: str, inner: float, outer: float, implied: float) -> dict[str, Any]:
    return {"id": ring_id, "ring_inner_edge": inner, "ring_outer_edge": outer,
            "ring_implied_density": implied}


def test_the_parents_rings_and_ring_siblings_are_drawn_with_their_implied_density() -> None:
    # Saturn's A ring (PDS Rings Node) implies ~770 kg/m3 (REFERENCES.md, computed).
    detail = _detail(3.0 * R_PARENT, 0.0)
    detail["system"]["parent"].update(_ring_row("giant", 1.2 * R_PARENT, 1.9 * R_PARENT, 770.0))
    detail["system"]["siblings"] = [_ring_row("A", 2.0 * R_PARENT, 2.3 * R_PARENT, 650.0)]
    rings = [t for t in system_figures(detail)[0]["linear"]["data"] if t["meta"] == "ring"]
    assert [t["name"].split(":")[0] for t in rings] == ["ring of giant", "ring of A"]
    assert "implied density 770 kg/m³" in rings[0]["name"]
    assert max(rings[0]["x"]) == pytest.approx(1.9) and rings[0]["fill"] == "toself"
    assert min(abs(x) for x in rings[0]["x"]) == pytest.approx(0.0, abs=1e-3)  # its inner edge
    assert max(abs(y) for y in rings[1]["y"]) == pytest.approx(2.3, rel=1e-3)


def test_a_rings_own_page_is_centred_on_its_planet() -> None:
    detail = {"id": "A", "findings": [], "fields": [{"field": "family", "value": "ring"}],
              "derived": {"parent_radius": R_PARENT, "ring_inner_edge": 2.0 * R_PARENT,
                          "ring_outer_edge": 2.3 * R_PARENT, "ring_implied_density": 650.0},
              "system": {"parent": {"id": "giant", "radius": R_PARENT}, "siblings": []}}
    figures, default, caption = system_figures(detail)
    [ring] = [t for t in figures["linear"]["data"] if t["meta"] == "ring"]
    assert ring["name"].startswith("ring of A: ") and "implied density 650" in ring["name"]
    assert default == "linear" and "outer edge implies" in caption


def test_a_planets_own_ring_is_drawn_about_it() -> None:
    detail = _detail(3.0 * R_PARENT, 0.0, ring_inner_edge=0.01 * R_PARENT,
                     ring_outer_edge=0.02 * R_PARENT, ring_implied_density=800.0)
    [ring] = [t for t in system_figures(detail)[0]["linear"]["data"] if t["meta"] == "ring"]
    assert max(ring["x"]) == pytest.approx(3.02, rel=1e-3)  # about the body at 3 parent radii
