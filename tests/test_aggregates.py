"""Aggregates: binned counts for every diagram, computed from the engine's Parquet files."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import polars as pl
import pytest
from engine_output import HOSTILE_LABEL, write_engine_output

from bodycensus.diagrams import aggregates
from bodycensus.diagrams.aggregates import band_density, compute_aggregates
from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.physics.bodies import composition_radius
from bodycensus.science.units import M_EARTH, M_SUN, R_EARTH


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return write_engine_output(tmp_path_factory.mktemp("engine"))


@pytest.fixture(scope="module")
def aggs(workdir: Path) -> dict[str, Any]:
    return compute_aggregates(workdir)


def test_is_strict_json(aggs: dict[str, Any]) -> None:
    json.dumps(aggs, allow_nan=False)


def test_counts_by_label_family_severity_and_rule(aggs: dict[str, Any]) -> None:
    assert aggs["rows"] == 107
    labels = {r["label"]: (r["family"], r["count"]) for r in aggs["labels"]}
    assert labels == {"Rocky world": ("rock", 60), "Gas giant": ("gas_giant", 20),
                      "Icy moon": ("ice", 20), HOSTILE_LABEL: ("unknown", 4), "G2V": ("star", 3)}
    assert aggs["labels"][0]["label"] == "Rocky world"  # most common first
    assert sum(r["count"] for r in aggs["families"]) == 107
    severity = {r["severity"]: r["count"] for r in aggs["severity"]}
    assert severity == {"error": 1, "impossible": 2, "unstable": 0, "suspect": 4, "note": 1}
    assert [r["rule"] for r in aggs["rules"][:3]] == ["missing-value", "denser-than-iron",
                                                      "inside-rigid-roche"]


def test_density_histogram_counts_every_body_of_the_label(aggs: dict[str, Any]) -> None:
    series = {s["label"]: s for s in aggs["density"]["series"]}
    assert sum(series["Rocky world"]["counts"]) == 60
    assert sum(series["G2V"]["counts"]) == 3
    for one in aggs["density"]["series"]:
        assert len(one["edges"]) == aggregates.BINS + 1
    # each label has bins of its own, spanning its data and (within reach) its family's band
    rock, star = series["Rocky world"], series["G2V"]
    assert rock["edges"][0] <= rock["band"][0] and rock["edges"][-1] >= rock["band"][1]
    assert star["edges"][0] < math.log10(1410) < rock["edges"][0]  # the Sun: 1410 kg m-3


def test_rock_band_at_earth_mass_holds_the_earth() -> None:
    # Earth's bulk density 5514 kg m-3 (NASA NSSDCA Earth fact sheet) lies in the rock band.
    low, high = band_density(FAMILY_PARAMETERS["rock"].density_band, M_EARTH)
    assert low < 5514 < high
    # and a pure-iron Earth-mass body (~1.3e4 kg m-3 from Seager et al. 2007) at its top edge
    assert 1.0e4 < high < 1.6e4


def test_density_band_is_the_familys_band_at_the_median_mass(aggs: dict[str, Any]) -> None:
    series = {s["label"]: s for s in aggs["density"]["series"]}
    rock = series["Rocky world"]
    low, high = band_density(FAMILY_PARAMETERS["rock"].density_band, rock["median_mass"])
    assert rock["band"] == pytest.approx([math.log10(low), math.log10(high)])
    assert series[HOSTILE_LABEL]["band"] is None  # the unknown family has no band


def test_band_needs_a_mass_unless_constant() -> None:
    assert band_density(FAMILY_PARAMETERS["rock"].density_band, None) is None
    assert band_density(FAMILY_PARAMETERS["neutron_star"].density_band, None) == (1e16, 3e18)


def test_mass_radius_histogram_and_composition_curves(aggs: dict[str, Any]) -> None:
    diagram = aggs["mass_radius"]
    assert sum(map(sum, diagram["z"])) == 107
    assert len(diagram["z"]) == len(diagram["y_edges"]) - 1
    curves = {c["name"]: c for c in diagram["curves"]}
    assert set(curves) == {"iron", "rock", "water ice", "cold H/He"}
    # at the same mass, iron is smaller than rock, which is smaller than ice (Seager et al. 2007)
    radii = [curves[name]["y"][0] for name in ("iron", "rock", "water ice")]
    assert radii == sorted(radii)
    x0 = curves["rock"]["x"][0]
    expected = math.log10(composition_radius(10**x0 * M_EARTH, "rock") / R_EARTH)
    assert curves["rock"]["y"][0] == pytest.approx(expected)
    assert max(curves["iron"]["x"]) <= math.log10(20) + 1e-9  # the fit's published range


def test_roche_plane_and_its_flagged_moon(aggs: dict[str, Any]) -> None:
    diagram = aggs["roche"]
    assert sum(map(sum, diagram["z"])) == 100  # every body with a parent
    # rigid 2^(1/3) = 1.26 (Shu 1982) and fluid 2.44 (Roche 1849) coefficients
    coefficients = sorted(line["coefficient"] for line in diagram["lines"])
    assert coefficients == pytest.approx([1.26, 2.44], rel=1e-3)
    first = diagram["flagged"][0]
    assert (first["body"], first["severity"]) == ("moon-0", "impossible")
    # moon-0 was placed inside the rigid Roche limit: under the line y = 1.26 x
    assert 10 ** first["y"] < 1.26 * 10 ** first["x"]


def test_orbit_histograms_include_their_reference_values(aggs: dict[str, Any]) -> None:
    hill, kepler = aggs["hill"], aggs["kepler"]
    assert sum(hill["counts"]) == 20
    assert sum(kepler["counts"]) == 100  # every body with a parent
    for diagram in (hill, kepler):
        for line in diagram["lines"]:
            assert diagram["edges"][0] < line["at"] < diagram["edges"][-1]
    assert [r["body"] for r in kepler["flagged"]] == ["moon-5"]
    # residual (P / P_Kepler - 1) in per cent, held at the +10 % end of the window
    assert kepler["flagged"][0]["x"] == pytest.approx(10.0)
    assert kepler["edges"][0] == pytest.approx(-10.0) and kepler["edges"][-1] == pytest.approx(10.0)


def test_flagged_keeps_the_most_serious_finding_per_body(aggs: dict[str, Any]) -> None:
    flagged = aggs["density"]["flagged"]
    assert [r["body"] for r in flagged] == ["rock-4", "odd-0", "rock-3"]
    assert flagged[0]["rule"] == "denser-than-iron"  # impossible beats its suspect finding


def test_flagged_bodies_are_capped(workdir: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(aggregates, "FLAGGED_CAP", 1)
    capped = compute_aggregates(workdir)
    assert [r["body"] for r in capped["density"]["flagged"]] == ["rock-4"]


def test_distributions_per_field_and_label_with_artefacts(aggs: dict[str, Any]) -> None:
    dist = aggs["distributions"]
    mass = dist["fields"]["mass"]
    assert mass["log"] and mass["unit"] == "kg"
    by_label = {s["label"]: sum(s["counts"]) for s in mass["series"]}
    assert by_label["Rocky world"] == 60
    assert dist["fields"]["eccentricity"]["log"] is False
    assert {a["kind"] for a in dist["artefacts"]} == {"cutoff", "gap", "spike"}


def test_missing_columns_leave_diagrams_out(tmp_path: Path) -> None:
    pl.DataFrame({"id": ["a", "b"], "label": ["x", "x"], "family": ["rock", "rock"],
                  "mass": [1e24, 2e24]}).write_parquet(tmp_path / "bodies.parquet")
    result = compute_aggregates(tmp_path)
    assert result["rows"] == 2
    assert result["density"] is None and result["roche"] is None
    assert result["severity"][0] == {"severity": "error", "count": 0, "bodies": 0}
    assert list(result["distributions"]["fields"]) == ["mass"]


def test_no_band_where_the_curve_is_past_its_validity() -> None:
    # Nauenberg 1972's white-dwarf radius vanishes at 1.454 M_sun: no density band beyond it
    # (this once divided by zero and failed the whole ingest of a small catalogue).
    band = FAMILY_PARAMETERS["white_dwarf"].density_band
    assert band_density(band, 1.6 * M_SUN) is None
    low, high = band_density(band, 0.6 * M_SUN)
    assert 0 < low < high
