"""The real Solar System, typed in from the fact sheets, through every rule: nothing impossible.

Data: tests/solar_system.py (JPL SSD physical parameters, NSSDCA fact sheets; sources per row).
"""

from __future__ import annotations

from pathlib import Path

import polars as pl
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
