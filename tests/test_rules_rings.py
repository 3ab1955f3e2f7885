"""The ring rules and the ring columns of the derived context: one ring that must fire and one
near the limit that must not, per rule, with the source beside each check; rings as bodies of
their own family and as columns of their planet; edges given in radii of the planet.

Bodies are synthetic with a known answer, run through the real engine (``catalogue_builder``);
the file test goes through ingest as well.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import polars as pl
import pytest
from catalogue_builder import SUN_LIKE, fired, run

from bodycensus.engines.local import CheckOptions, check_file
from bodycensus.science.physics import bodies, orbits
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.rules.ring_context import ASSUMED_RING_DENSITY
from bodycensus.science.rules.rings import ring_rules
from bodycensus.science.units import AU, PLANET_RADII

KM = 1e3
# Saturn (JPL SSD, REFERENCES.md): mass kg, mean radius m, a = 9.537 au, e = 0.054 (from memory).
SATURN_MASS, SATURN_RADIUS = 568.3174e24, 58_232 * KM
GIANT = {"id": "G", "label": "gas giant", "family": "gas_giant", "parent": "S",
         "mass": SATURN_MASS, "radius": SATURN_RADIUS, "semi_major_axis": 9.537 * AU,
         "eccentricity": 0.054, "age": 4.6e9}
SATURN_DENSITY = bodies.bulk_density(SATURN_MASS, SATURN_RADIUS)
ICE_FLUID = orbits.roche_fluid(SATURN_RADIUS, SATURN_DENSITY, ASSUMED_RING_DENSITY)
GIANT_HILL = orbits.hill_radius(9.537 * AU, 0.054, SATURN_MASS, SUN_LIKE["mass"])


def ring(ring_id: str, inner: float | None, outer: float | None, parent: str = "G",
         **extra: Any) -> dict[str, Any]:
    """A body of the ring family about ``parent``, edges in metres."""
    return {"id": ring_id, "label": "planetary ring", "family": "ring", "parent": parent,
            "ring_inner": inner, "ring_outer": outer, **extra}


def moon(moon_id: str, a: float, parent: str = "G") -> dict[str, Any]:
    """A small icy moon (10 km, 500 kg m-3) on a circular orbit."""
    return {"id": moon_id, "label": "small moon", "family": "minor", "parent": parent,
            "mass": 500.0 * bodies.sphere_volume(10 * KM), "radius": 10 * KM,
            "semi_major_axis": a, "eccentricity": 0.0, "age": 4.6e9}


def test_saturn_like_rings_raise_no_ring_finding(tmp_path: Path) -> None:
    # Saturn's C, B and A rings (PDS Rings Node, REFERENCES.md): the A ring's outer edge lies
    # 1.06x past the fluid limit for solid ice with the mean radius, within the tolerance for
    # porous particles; its edge implies ~770 kg/m3 (computed, REFERENCES.md).
    rows = [SUN_LIKE, GIANT, ring("C", 74_491 * KM, 91_975 * KM),
            ring("B", 91_975 * KM, 117_570 * KM), ring("A", 122_170 * KM, 136_775 * KM)]
    result = run(rows, tmp_path)
    assert result.findings.filter(pl.col("body").is_in(["C", "B", "A"])).height == 0
    derived = pl.read_parquet(result.bodies).filter(pl.col("id") == "A").row(0, named=True)
    assert derived["ring_implied_density"] == pytest.approx(770, rel=1e-2)
    assert derived["ring_outer_edge"] / derived["ring_roche_fluid"] == pytest.approx(1.06,
                                                                                    abs=0.01)


def test_ring_inside_planet(tmp_path: Path) -> None:
    # Geometry: the inner edge below the planet's radius cuts through the planet.
    rows = [SUN_LIKE, GIANT, ring("in", 0.9 * SATURN_RADIUS, 2.0 * SATURN_RADIUS),
            ring("grazing", 1.02 * SATURN_RADIUS, 2.0 * SATURN_RADIUS)]
    assert fired(run(rows, tmp_path), "ring-inside-planet") == {"in": "impossible"}


def test_ring_beyond_roche(tmp_path: Path) -> None:
    # Roche 1849, fluid 2.44 R (rho_M / rho_m)^(1/3), for solid ice (917 kg/m3, CRC Handbook)
    # when the material is not given; suspect past 1.2x (OrbitSettings.ring_roche_tolerance).
    rock = orbits.roche_fluid(SATURN_RADIUS, SATURN_DENSITY, 3000.0)
    rows = [SUN_LIKE, GIANT, ring("wide", 1.5 * SATURN_RADIUS, 1.3 * ICE_FLUID),
            ring("edge", 1.5 * SATURN_RADIUS, 1.15 * ICE_FLUID),
            ring("rocky", 1.5 * SATURN_RADIUS, 1.3 * rock, ring_density=3000.0),
            ring("rocky-edge", 1.5 * SATURN_RADIUS, 1.15 * rock, ring_density=3000.0)]
    result = run(rows, tmp_path)
    assert fired(result, "ring-beyond-roche") == {"wide": "suspect", "rocky": "suspect"}
    wide = result.findings.filter(rule="ring-beyond-roche", body="wide").row(0, named=True)
    assert wide["value"] == pytest.approx(1.3, rel=1e-9)
    assert wide["margin"] == pytest.approx(1.3 / 1.2 - 1, rel=1e-9)  # by how far
    assert "(ice, assumed)" in wide["message"] and "implies" in wide["message"]


def test_ring_beyond_roche_tolerance_is_a_setting(tmp_path: Path) -> None:
    rows = [SUN_LIKE, GIANT, ring("edge", 1.5 * SATURN_RADIUS, 1.15 * ICE_FLUID)]
    strict = OrbitSettings(ring_roche_tolerance=1.0)
    assert fired(run(rows, tmp_path, orbit_settings=strict), "ring-beyond-roche") == {
        "edge": "suspect"}


def test_ring_beyond_hill(tmp_path: Path) -> None:
    # Hill sphere r_H = a(1-e)(m/3M)^(1/3) (Hill 1878): nothing bound to the planet reaches past.
    rows = [SUN_LIKE, GIANT, ring("escaped", 2 * SATURN_RADIUS, 1.1 * GIANT_HILL),
            ring("held", 2 * SATURN_RADIUS, 0.9 * GIANT_HILL)]
    assert fired(run(rows, tmp_path), "ring-beyond-hill") == {"escaped": "impossible"}


def test_moon_in_ring_of_a_ring_body_and_of_the_planets_columns(tmp_path: Path) -> None:
    # Pan orbits in the Encke gap of Saturn's A ring (NSSDCA, REFERENCES.md: a = 133,584 km
    # inside 122,170-136,775 km): a note, not a fault. Atlas (137,670 km) is just outside.
    carrier = {**GIANT, "id": "H", "ring_inner": 122_170 * KM, "ring_outer": 136_775 * KM}
    rows = [SUN_LIKE, GIANT, carrier, ring("A", 122_170 * KM, 136_775 * KM),
            moon("pan", 133_584 * KM), moon("atlas", 137_670 * KM),
            moon("pan2", 133_584 * KM, parent="H"), moon("atlas2", 137_670 * KM, parent="H")]
    result = run(rows, tmp_path)
    assert fired(result, "moon-in-ring") == {"pan": "note", "pan2": "note"}
    messages = dict(result.findings.filter(rule="moon-in-ring").select("body", "message")
                    .iter_rows())
    assert "ring of 'A'" in messages["pan"] and "ring of 'H'" in messages["pan2"]


def test_ring_edges_reversed_is_an_error(tmp_path: Path) -> None:
    rows = [SUN_LIKE, GIANT, ring("reversed", 3 * SATURN_RADIUS, 2 * SATURN_RADIUS),
            ring("thin", 2 * SATURN_RADIUS, 2.02 * SATURN_RADIUS)]
    assert fired(run(rows, tmp_path), "ring-edges-reversed") == {"reversed": "error"}


def test_a_ring_needs_a_planet_and_an_outer_edge(tmp_path: Path) -> None:
    rows = [SUN_LIKE, GIANT, ring("loose", 2 * SATURN_RADIUS, 3 * SATURN_RADIUS, parent=None),
            ring("open", 2 * SATURN_RADIUS, None), ring("ok", 2 * SATURN_RADIUS, 3 * SATURN_RADIUS)]
    result = run(rows, tmp_path)
    assert fired(result, "missing-value") == {"loose": "error", "open": "error"}
    messages = dict(result.findings.filter(rule="missing-value").select("body", "message")
                    .iter_rows())
    assert messages == {"loose": "a ring but no parent planet", "open": "a ring but no outer edge"}


def test_a_ring_is_judged_by_ring_rules_only(tmp_path: Path) -> None:
    # A ring has no mass, radius or orbit of its own: body and orbit rules do not apply to it.
    rows = [SUN_LIKE, GIANT, ring("A", 122_170 * KM, 136_775 * KM)]
    result = run(rows, tmp_path)
    coverage = {r["rule"]: r for r in result.coverage.iter_rows(named=True)}
    assert coverage["family-density"]["evaluated"] + coverage["family-density"]["skipped"] == 2
    assert coverage["ring-beyond-roche"]["evaluated"] == 1
    assert coverage["periapsis-inside-parent"]["evaluated"] == 1  # the giant only


def test_edges_in_planet_radii_use_the_planets_radius(tmp_path: Path) -> None:
    # On a planet's row the unit is its own radius; on a ring's row, its parent's.
    carrier = {**GIANT, "id": "H", "ring_inner": 1.2, "ring_outer": 2.3,
               PLANET_RADII: "ring_inner,ring_outer"}
    rows = [SUN_LIKE, GIANT, carrier,
            ring("R", 1.2, 2.3, **{PLANET_RADII: "ring_inner,ring_outer"})]
    table = pl.read_parquet(run(rows, tmp_path).bodies).filter(pl.col("id").is_in(["H", "R"]))
    for row in table.iter_rows(named=True):
        assert row["ring_inner_edge"] == pytest.approx(1.2 * SATURN_RADIUS, rel=1e-12)
        assert row["ring_outer_edge"] == pytest.approx(2.3 * SATURN_RADIUS, rel=1e-12)


def test_a_catalogue_file_with_ring_columns_in_km_and_planet_radii(tmp_path: Path) -> None:
    # Through ingest: `ring_inner_km` in km, `ring outer [R_planet]` in radii of the planet.
    source = tmp_path / "ringed.csv"
    source.write_text(
        "id,type,parent,mass_kg,radius_km,a (au),e,ring_inner_km,ring outer [R_planet]\n"
        "S,yellow dwarf star,,1.989e30,695700,,,,\n"
        "G,gas giant,S,5.683e26,58232,9.537,0.054,74491,2.3488\n"
        "W,gas giant,S,5.683e26,58232,19.0,0.05,70000,3.0\n", encoding="utf-8")
    result = check_file(source, tmp_path / "run", CheckOptions(artefacts=False))
    table = pl.read_parquet(result.bodies).filter(pl.col("id") == "G").row(0, named=True)
    assert table["ring_inner_edge"] == pytest.approx(74_491 * KM, rel=1e-9)
    assert table["ring_outer_edge"] == pytest.approx(2.3488 * SATURN_RADIUS, rel=1e-9)
    assert fired(result, "ring-beyond-roche") == {"W": "suspect"}  # 3 R_p = 1.35x ice's limit


def test_every_ring_rule_names_its_source() -> None:
    for rule in ring_rules(OrbitSettings()):
        assert rule.source and rule.title
