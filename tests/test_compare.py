"""Comparing two runs (engines/compare.py, engines/shifts.py) through the real engine: bodies by
id, findings by body and rule, artefacts, and the distribution-shift test, which must find a
planted shift of a tenth of a standard deviation in one label of 10,000 bodies and nothing
between two seeds of the same generator."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest
from catalogue_builder import EARTH_LIKE, SUN_LIKE, run
from shift_support import label_catalogue

from bodycensus.engines import compare
from bodycensus.engines.compare import artefacts_diff, compare_runs, new_findings
from bodycensus.engines.local import CheckOptions, check_file
from bodycensus.engines.shifts import UNIT, label_sample
from bodycensus.science.units import M_EARTH

# Seager et al. 2007: a 1 M_earth body of 4,000 km radius (density ~23,000 kg/m3) is denser
# than pure iron (~11,200 kg/m3 at that mass): denser-than-iron, impossible.
LEAD = {**EARTH_LIKE, "id": "lead", "radius": 4.0e6}
MARS = {**EARTH_LIKE, "id": "mars", "mass": 0.107 * M_EARTH, "radius": 3.39e6}


@pytest.fixture(scope="module")
def two_runs(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    root = tmp_path_factory.mktemp("runs")
    heavier = {**EARTH_LIKE, "mass": 1.5 * M_EARTH}
    run([SUN_LIKE, EARTH_LIKE, LEAD], root / "old")
    run([SUN_LIKE, heavier, MARS], root / "new")
    return root / "old", root / "new"


def test_bodies_are_matched_by_id(two_runs: tuple[Path, Path]) -> None:
    result = compare_runs(*two_runs)
    bodies = result["bodies"]
    assert (bodies["added"], bodies["removed"], bodies["changed"], bodies["unchanged"]) == \
        (1, 1, 1, 1)
    assert bodies["changed_fields"] == {"mass": 1}
    assert bodies["examples"] == {"added": ["mars"], "removed": ["lead"], "changed": ["P"]}
    assert result["old"]["bodies"] == result["new"]["bodies"] == 3


def test_buckets_of_ids_add_up_to_the_whole(two_runs: tuple[Path, Path],
                                            monkeypatch: pytest.MonkeyPatch) -> None:
    whole = compare_runs(*two_runs)["bodies"]
    monkeypatch.setattr(compare, "BUCKET_ROWS", 1)  # three bodies: three buckets
    assert compare_runs(*two_runs)["bodies"] == whole


def test_findings_are_matched_by_body_and_rule(two_runs: tuple[Path, Path]) -> None:
    findings = compare_runs(*two_runs)["findings"]
    iron = next(g for g in findings["by_group"] if g["rule"] == "denser-than-iron")
    assert (iron["fixed"], iron["new"], iron["severity"]) == (1, 0, "impossible")
    assert findings["fixed"] >= 1
    total = sum(r["new"] + r["fixed"] + r["unchanged"] for r in findings["by_severity"])
    assert total == findings["new"] + findings["fixed"] + findings["unchanged"]


def test_a_finding_that_got_more_serious_is_new_at_its_new_level() -> None:
    old = pl.LazyFrame({"body": ["a", "b"], "rule": ["r", "r"], "severity": ["suspect", "note"]})
    new = pl.LazyFrame({"body": ["a", "b", "c"], "rule": ["r", "r", "r"],
                        "severity": ["impossible", "note", "impossible"]})
    assert new_findings(old, new, "impossible").collect()["body"].to_list() == ["a", "c"]
    assert new_findings(old, new, "note").collect()["body"].to_list() == ["c"]
    assert new_findings(new, new, "note").collect().height == 0


def test_artefacts_match_by_kind_and_place() -> None:
    def artefact(kind: str, at: float) -> dict[str, object]:
        return {"scope": "label", "label": "asteroid", "field": "radius", "kind": kind, "at": at}
    old = pl.DataFrame([artefact("cutoff", 6000.0), artefact("gap", 10.0)])
    new = pl.DataFrame([artefact("cutoff", 6100.0), artefact("spike", 3.0)])
    found = artefacts_diff(old, new)
    assert [a["kind"] for a in found["appeared"]] == ["spike"]
    assert [a["kind"] for a in found["vanished"]] == ["gap"]
    assert found["persisted"] == 1


def test_the_sample_is_bounded_per_label_in_whole_systems() -> None:
    n = 30_000
    bodies = pl.LazyFrame({"id": [f"b{i}" for i in range(n)], "_row": range(n),
                           "system": [f"s{i // 3}" if i < 6_000 else None for i in range(n)],
                           "label": ["big"] * 29_000 + ["small"] * 1_000,
                           "mass": [10.0] * n})
    sample = label_sample(bodies, ["mass"], cap=5_000)
    units = dict(sample.group_by("label").agg(pl.col(UNIT).n_unique()).iter_rows())
    # of 25,000 units; counted by HyperLogLog, so the share (and the sample) is approximate
    assert units["small"] == 1_000 and 4_000 < units["big"] < 6_500
    systems = sample.filter(pl.col(UNIT).str.starts_with("s")).group_by(UNIT).len()
    assert set(systems["len"]) == {3}  # a picked system comes with all its bodies
    assert set(sample["mass"]) == {1.0}  # log10, the test's scale
    again = label_sample(bodies.reverse(), ["mass"], cap=5_000)
    assert again.sort(UNIT).equals(sample.sort(UNIT))


@pytest.fixture(scope="module")
def label_runs(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """Checked runs of the one-label generator: seed 1, seed 2, and seed 2 shifted by 0.1 SD."""
    root = tmp_path_factory.mktemp("shift")
    runs = {}
    for name, seed, shift in (("old", 1, 0.0), ("same", 2, 0.0), ("shifted", 2, 0.1)):
        source = label_catalogue(root / f"{name}.csv", seed, shift_sd=shift)
        check_file(source, root / name, CheckOptions(artefacts=False))
        runs[name] = root / name
    return runs


def test_a_tenth_of_a_standard_deviation_in_one_label_of_ten_thousand_is_found(
        label_runs: dict[str, Path]) -> None:
    shifts = compare_runs(label_runs["old"], label_runs["shifted"])["shifts"]
    reported = [(s["label"], s["field"]) for s in shifts if s["shifted"]]
    assert reported == [("stony world", "mass")]
    top = shifts[0]
    assert top["n_old"] == top["n_new"] == top["units_old"] == 10_000  # no system: a body each
    assert top["effect"] == pytest.approx(0.1, abs=0.04)
    assert top["q_value"] < 0.001
    assert len(shifts) == 4  # two labels x (mass, radius)


def test_two_seeds_of_the_same_generator_report_nothing(label_runs: dict[str, Path]) -> None:
    shifts = compare_runs(label_runs["old"], label_runs["same"])["shifts"]
    assert len(shifts) == 4 and not any(s["shifted"] for s in shifts)
