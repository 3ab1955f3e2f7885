"""Aggregates: the overview counts and every registered diagram's aggregate, computed from the
engine's Parquet files in one run of plans."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import polars as pl
import pytest
from engine_output import HOSTILE_LABEL, write_engine_output

from bodycensus.diagrams import base, registry
from bodycensus.diagrams.aggregates import VERSION, compute_aggregates
from bodycensus.science.rules.orbit import OrbitSettings


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return write_engine_output(tmp_path_factory.mktemp("engine"))


@pytest.fixture(scope="module")
def aggs(workdir: Path) -> dict[str, Any]:
    return dict(compute_aggregates(workdir))


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


def test_every_registered_diagram_has_its_key(aggs: dict[str, Any]) -> None:
    assert list(aggs["diagrams"]) == list(registry.KEYS)
    assert aggs["version"] == VERSION


def test_flagged_keeps_the_most_serious_finding_per_body(aggs: dict[str, Any]) -> None:
    flagged = aggs["diagrams"]["density"]["flagged"]
    assert [r["body"] for r in flagged] == ["rock-4", "odd-0", "rock-3"]
    assert flagged[0]["rule"] == "denser-than-iron"  # impossible beats its suspect finding


def test_flagged_bodies_are_capped(workdir: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(base, "FLAGGED_CAP", 1)
    capped = compute_aggregates(workdir)
    assert [r["body"] for r in capped["diagrams"]["density"]["flagged"]] == ["rock-4"]


def test_the_checks_orbit_settings_are_recorded_and_drawn(workdir: Path) -> None:
    settings = OrbitSettings(kepler_tolerance=0.02)
    result = compute_aggregates(workdir, settings)
    assert result["orbit_settings"]["kepler_tolerance"] == 0.02
    lines = [(line["name"], line["at"])
             for line in result["diagrams"]["orbits"]["kepler"]["lines"]]
    assert [at for name, at in lines if name == "kepler-mismatch tolerance (+-2 %)"] == \
        pytest.approx([-2.0, 2.0])


def test_missing_columns_leave_diagrams_out(tmp_path: Path) -> None:
    pl.DataFrame({"id": ["a", "b"], "label": ["x", "x"], "family": ["rock", "rock"],
                  "mass": [1e24, 2e24]}).write_parquet(tmp_path / "bodies.parquet")
    result = compute_aggregates(tmp_path)
    assert result["rows"] == 2
    assert result["diagrams"]["density"] is None and result["diagrams"]["roche"] is None
    assert result["severity"][0] == {"severity": "error", "count": 0, "bodies": 0}
    assert list(result["diagrams"]["distributions"]["fields"]) == ["mass"]
