"""The manifest and the shape of its records: what the ingest, the mapping step, the engine and
the upload jobs write must have exactly the keys their records declare, or the dashboard reads a
shape that is not there."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from bodycensus.dashboard.intake.jobs import Overrides
from bodycensus.engines.local import check_file
from bodycensus.input.ingest import IngestRecord, ingest
from bodycensus.input.schema import ChoiceRecord, MappingRecord
from bodycensus.input.sniff import ProposalRecord, sniff
from bodycensus.storage.manifest import Manifest, ManifestChanges, OverridesRecord, RunSummary

CSV = ("id,type,orbits,mass (earth_mass),radius_km,a (au),e,colour\n"
       "sol,yellow dwarf star,,332946,695700,,,white\n"
       "terra,terrestrial planet,sol,1,6371,1,0.0167,blue\n")


@pytest.fixture()
def catalogue(tmp_path: Path) -> Path:
    path = tmp_path / "tiny.csv"
    path.write_text(CSV)
    return path


def _keys(record: type) -> set[str]:
    return set(record.__annotations__)


def _assert_mapping_shape(mapping: dict[str, Any]) -> None:
    assert set(mapping) == _keys(MappingRecord)
    assert mapping["choices"], "the tiny catalogue maps several fields"
    for choice in mapping["choices"].values():
        assert set(choice) == _keys(ChoiceRecord)


def test_the_ingest_report_is_the_declared_record(catalogue: Path, tmp_path: Path) -> None:
    report = ingest(catalogue, tmp_path / "out" / "table.parquet")
    record = report.to_json()
    assert set(record) == _keys(IngestRecord)
    _assert_mapping_shape(dict(record["mapping"]))
    assert record["unknown_columns"] == ["colour"] and record["rows"] == 2


def test_the_mapping_proposal_is_the_declared_record(catalogue: Path) -> None:
    found = sniff(catalogue, catalogue.name, max_columns=100)
    assert found is not None
    record = found.to_json()
    assert set(record) == _keys(ProposalRecord)
    _assert_mapping_shape(dict(record["mapping"]))
    assert record["samples"]["colour"] == ["white", "blue"]


def test_the_run_summary_is_the_declared_record(catalogue: Path, tmp_path: Path) -> None:
    summary = check_file(catalogue, tmp_path / "work").summary  # a run from a file: timed
    assert set(summary) == _keys(RunSummary)


def test_the_overrides_are_the_declared_record() -> None:
    record = Overrides({"id": "name"}, {"mass": "kg"}, {"lava world": "rock"}).to_record()
    assert set(record) == {"map", "units", "families"}  # the choices every run makes
    assert record == {"map": {"id": "name"}, "units": {"mass": "kg"},
                      "families": {"lava world": "rock"}}
    # one row per planet: the host columns, their units and the null sentinels are kept too
    full = Overrides({"id": "name"}, {}, {}, {"name": "star_name"}, {"mass": "solar_mass"},
                     ("-1",)).to_record()
    assert set(full) == _keys(OverridesRecord)
    assert (full["hosts"], full["host_units"], full["nulls"]) == (
        {"name": "star_name"}, {"mass": "solar_mass"}, ["-1"])


def test_what_a_run_may_change_is_part_of_the_manifest() -> None:
    assert _keys(ManifestChanges) <= set(Manifest.__dataclass_fields__)
    assert {"id", "name", "created", "source", "demo"}.isdisjoint(_keys(ManifestChanges))


def test_a_manifest_survives_json_and_ignores_keys_it_does_not_know() -> None:
    manifest = Manifest(id="abcd1234", name="t.csv", status="ready", created="2024-01-01T00:00:00",
                        rows=2, options={"map": {}, "units": {}, "families": {}})
    data = json.loads(json.dumps(manifest.to_json()))
    assert Manifest.from_json(data) == manifest
    assert Manifest.from_json({**data, "from_a_later_version": 1}) == manifest
    assert manifest.progress == {"stage": "upload", "fraction": 0.0}
    assert Manifest(id="b", name="b", status="mapping", created="").progress is not \
        manifest.progress  # each manifest has its own default record
