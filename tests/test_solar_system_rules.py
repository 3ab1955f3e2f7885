"""The real Solar System, typed in from the fact sheets, through every rule: nothing impossible.

Data: tests/solar_system.py (JPL SSD physical parameters, NSSDCA fact sheets; sources per row).
"""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest
from solar_system import solar_system_frame

from bodycensus.engines.local import CheckOptions, check_table


def test_no_impossible_and_no_error_in_the_solar_system(tmp_path: Path) -> None:
    result = check_table(solar_system_frame().lazy(), tmp_path, CheckOptions(artefacts=False))
    serious = result.findings.filter(pl.col("severity").is_in(["error", "impossible"]))
    assert serious.height == 0, serious.select("body", "rule", "message").to_dicts()


def test_solar_system_notes_are_the_known_ones(tmp_path: Path) -> None:
    # Facts to reproduce (REFERENCES.md): Pan, Atlas, Prometheus and Phobos lie inside their
    # parent's fluid Roche limit but outside the rigid one; Pluto-Charon's barycentre lies
    # outside Pluto. Sun-Jupiter's lies outside the Sun too (~1.07 R_sun), but a mass ratio of
    # 0.001 is a planet and its host, not a binary (ratio 0.01, common practice).
    result = check_table(solar_system_frame().lazy(), tmp_path, CheckOptions(artefacts=False))
    fluid = set(result.findings.filter(rule="inside-fluid-roche")["body"])
    assert {"pan", "atlas", "prometheus", "phobos"} <= fluid
    assert result.findings.filter(rule="inside-rigid-roche").height == 0
    barycentre = set(result.findings.filter(rule="binary-barycentre")["body"])
    assert barycentre == {"charon"}  # Earth-Moon's is 4,671 km inside Earth


def test_rings_heating_and_lifetimes_in_the_solar_system(tmp_path: Path) -> None:
    # Saturn's C, B and A rings (PDS Rings Node) raise nothing; Pan and Daphnis orbit in gaps of
    # the A ring (NSSDCA, REFERENCES.md). Phobos reaches Mars' Roche limit in ~30 Myr (computed;
    # 20-40 Myr, Black & Mittal 2015): the last 0.7 % of the age, a short-lived state. Triton
    # (retrograde) decays in ~2.8 Gyr (computed; 1.4-3.6 Gyr, Chyba, Jankowski & Nicholson 1989,
    # from memory): less than an age left, a note. Charon is locked with Pluto and does not
    # decay. No body's modelled tidal heat flux reaches Io's measured 2.4 W/m2 (Io itself: 0.08
    # W/m2, computed with the rock family's k2/Q; Io's measured 0.015 would give 2.2 W/m2).
    result = check_table(solar_system_frame().lazy(), tmp_path, CheckOptions(artefacts=False))
    findings = result.findings
    rings = ["c_ring", "b_ring", "a_ring"]
    assert findings.filter(pl.col("body").is_in(rings)).height == 0
    assert set(findings.filter(rule="moon-in-ring")["body"]) == {"pan", "daphnis"}
    lives = dict(findings.filter(rule="short-lived-orbit").select("body", "severity").iter_rows())
    assert lives == {"phobos": "unstable", "triton": "note"}
    assert findings.filter(rule="tidal-heating").height == 0
    bodies = pl.read_parquet(result.bodies).filter(pl.col("id") == "a_ring").row(0, named=True)
    assert bodies["ring_implied_density"] == pytest.approx(770, rel=1e-2)  # REFERENCES.md
