"""The single-machine engine: what ``check_file`` writes, the stages it reports, the families it
fills, and the options it honours. The rules themselves are checked in test_rules.py."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest
from catalogue_builder import EARTH_LIKE, SUN_LIKE, normalised
from polars.testing import assert_frame_equal

from bodycensus.engines.local import CheckOptions, check_file, check_table, with_families
from bodycensus.science.artefacts import ARTEFACT_SCHEMA
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.storage.runs import in_list_order

# Earth about a Sun-like star, plus a body whose period is 4 % off Kepler's third law
CSV = ("id,type,orbits,mass (earth_mass),radius_km,a (au),e,period_days\n"
       "sol,yellow dwarf star,,332946,695700,,,\n"
       "terra,terrestrial planet,sol,1,6371,1,0.0167,365.256\n"
       "vesper,terrestrial planet,sol,1,6371,1,0.0167,379.87\n")


@pytest.fixture()
def catalogue(tmp_path: Path) -> Path:
    path = tmp_path / "tiny.csv"
    path.write_text(CSV)
    return path


def test_check_file_writes_the_engine_files_and_keeps_no_temporary(catalogue: Path,
                                                                   tmp_path: Path) -> None:
    work = tmp_path / "work"
    result = check_file(catalogue, work)
    assert sorted(p.name for p in work.iterdir()) == [
        "artefacts.parquet", "bodies", "coverage.parquet", "findings.parquet",
        "findings_by_body.parquet", "findings_by_system.parquet"]
    assert [p.name for p in (work / "bodies").iterdir()] == ["part-00000.parquet"]
    assert_frame_equal(pl.read_parquet(work / "findings.parquet"),  # in the list's order
                       in_list_order(result.findings.lazy()).collect())
    assert_frame_equal(pl.read_parquet(work / "coverage.parquet"), result.coverage)
    assert result.bodies == work / "bodies"
    assert result.report is not None and result.report.rows == 3
    assert result.summary["rows"] == 3 and result.summary["seconds"] >= 0


def test_progress_is_told_every_stage_in_order(catalogue: Path, tmp_path: Path) -> None:
    told: list[tuple[str, float, int | None]] = []

    def watch(stage: str, done: float, /, rows: int | None = None) -> None:
        told.append((stage, done, rows))

    check_file(catalogue, tmp_path / "work", progress=watch)
    assert told == [("read", 0.0, None), ("read", 1.0, 3), ("derive", 0.0, None),
                    ("rules", 0.0, None), ("rules", 1.0, None), ("artefacts", 0.0, None),
                    ("write", 1.0, None)]


def test_families_come_from_overrides_then_the_file_then_the_guess() -> None:
    table = pl.LazyFrame({"label": ["lava world", "lava world", "odd thing", "G2V", None],
                          "family": [None, "iron", "ice", "not-a-family", None]})
    filled, mapping = with_families(table, {"odd thing": "minor"})
    assert filled.collect()["family"].to_list() == ["rock", "iron", "minor", "star", "unknown"]
    assert mapping == {"G2V": "star", "lava world": "rock", "odd thing": "minor"}


def test_worst_severity_and_options(tmp_path: Path) -> None:
    off_by_4_percent = {**EARTH_LIKE, "id": "Q", "period": EARTH_LIKE["period"] * 1.04}
    table = normalised([SUN_LIKE, off_by_4_percent]).lazy()
    default = check_table(table, tmp_path / "a")
    assert default.findings.is_empty()  # within the default tolerance (15 % here)
    # a host mass known to 0.1 % leaves the 1 % floor as the tolerance
    strict = check_table(table, tmp_path / "b", CheckOptions(
        orbit_settings=OrbitSettings(kepler_tolerance=0.01, host_mass_uncertainty=0.001),
        artefacts=False))
    assert strict.findings.select("body", "rule", "severity").rows() == [
        ("Q", "kepler-mismatch", "suspect")]
    assert strict.worst_severity_rank() == 3  # suspect: 0 is error
    assert strict.artefacts.is_empty()
    assert strict.artefacts.schema == pl.Schema(ARTEFACT_SCHEMA)
    clean = check_table(normalised([SUN_LIKE]).lazy(), tmp_path / "c")
    assert clean.findings.is_empty() and clean.worst_severity_rank() is None
