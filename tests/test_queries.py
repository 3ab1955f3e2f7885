"""The data functions behind the API and the pages, on a catalogue checked by the real engine.

Expected values are computed here independently with eager polars over the engine's
findings.parquet, never copied from a previous run.
"""

from __future__ import annotations

import csv
import io
import json
import shutil
from pathlib import Path

import polars as pl
import pytest
from polars.testing import assert_frame_equal
from web_support import FORMULA_LABEL, write_catalogue

from bodycensus.dashboard.screens import queries, shapes
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams.aggregates import VERSION
from bodycensus.engines.local import check_file
from bodycensus.errors import NotFound
from bodycensus.science.severity import SEVERITIES
from bodycensus.science.units import M_EARTH
from bodycensus.storage.triage import DECISION_COLUMNS


@pytest.fixture(scope="module")
def checked(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A catalogue folder written by the real engine (the store's `catalogues/<id>/`)."""
    root = tmp_path_factory.mktemp("queries")
    source = write_catalogue(root / "catalogue.csv")
    result = check_file(source, root / "cat")
    queries_dir = root / "cat"
    (queries_dir / "manifest.json").write_text("{}")
    assert result.findings.height > 0
    return queries_dir


@pytest.fixture(scope="module")
def findings(checked: Path) -> pl.DataFrame:
    return pl.read_parquet(checked / "findings.parquet")


# --- findings ------------------------------------------------------------------------------


def test_default_order_is_most_serious_first(checked: Path, findings: pl.DataFrame) -> None:
    page = queries.findings_page(checked, ViewState(limit=1000))
    assert page["total"] == findings.height == len(page["items"])
    ranks = [SEVERITIES.index(item["severity"]) for item in page["items"]]
    assert ranks == sorted(ranks)


def test_filters_match_an_independent_count(checked: Path, findings: pl.DataFrame) -> None:
    state = ViewState.from_query("severity=impossible&severity=unstable&label=Icy+moon"
                                 "&min_margin=0")
    expected = findings.filter(pl.col("severity").is_in(["impossible", "unstable"]),
                               pl.col("label") == "Icy moon", pl.col("margin") >= 0)
    page = queries.findings_page(checked, state)
    assert expected.height > 0 and page["total"] == expected.height
    assert {(i["body"], i["rule"]) for i in page["items"]} == set(
        zip(expected["body"], expected["rule"], strict=True))


def test_pages_cover_the_sorted_list_once(checked: Path, findings: pl.DataFrame) -> None:
    state = ViewState(sort="-margin", limit=7)
    items = []
    for offset in range(0, findings.height, 7):
        items += queries.findings_page(checked, state.with_(offset=offset))["items"]
    assert len(items) == findings.height
    margins = [i["margin"] for i in items if i["margin"] is not None]
    assert margins == sorted(margins, reverse=True)
    assert queries.findings_page(checked, state.with_(offset=10**6))["items"] == []


def test_value_range(checked: Path, findings: pl.DataFrame) -> None:
    page = queries.findings_page(checked, ViewState(min_value=1e4, max_value=1e7, limit=1000))
    expected = findings.filter(pl.col("value").is_between(1e4, 1e7))
    assert page["total"] == expected.height > 0
    assert all(1e4 <= i["value"] <= 1e7 for i in page["items"])


def test_csv_export_neutralises_formulas(checked: Path, findings: pl.DataFrame,
                                         tmp_path: Path) -> None:
    dest = queries.export_findings(checked, ViewState(), "csv", tmp_path / "f.csv")
    rows = list(csv.DictReader(io.StringIO(dest.read_text(encoding="utf-8"))))
    assert len(rows) == findings.height
    assert any(r["label"] == "'" + FORMULA_LABEL for r in rows)
    texts = [k for k, t in findings.schema.items() if t == pl.String]
    assert not [r[k] for r in rows for k in texts if r[k][:1] in ("=", "+", "-", "@")]


def test_parquet_export_is_the_filtered_list(checked: Path, findings: pl.DataFrame,
                                             tmp_path: Path) -> None:
    state = ViewState(severity=("error",), sort="body")
    dest = queries.export_findings(checked, state, "parquet", tmp_path / "f.parquet")
    expected = findings.filter(pl.col("severity") == "error")
    exported = pl.read_parquet(dest)
    assert expected.height > 0
    assert exported.columns[:4] == ["body", "name", "system", "parent"]  # names beside ids
    decided = exported.select(DECISION_COLUMNS)  # no decision: the columns are there, empty
    assert decided.null_count().row(0) == (exported.height,) * len(DECISION_COLUMNS)
    assert_frame_equal(exported.drop(DECISION_COLUMNS), expected.select(
        exported.drop(DECISION_COLUMNS).columns), check_row_order=False)
    assert exported["body"].to_list() == sorted(expected["body"].to_list())


# --- body, overview ------------------------------------------------------------------------


def test_body_detail(checked: Path, findings: pl.DataFrame) -> None:
    mapping = {"choices": {"mass": {"field": "mass", "column": "mass [earth_mass]",
                                    "unit": "earth_mass", "unit_source": "header",
                                    "ambiguous": False}}}
    body = queries.body_detail(checked, "moon-0", {"mapping": mapping})
    mass = next(f for f in body["fields"] if f["field"] == "mass")
    assert mass["value"] == pytest.approx(1.7e-4 * M_EARTH, rel=1e-12)
    assert mass["original"] == pytest.approx(1.7e-4, rel=1e-12) and mass["unit"] == "kg"
    own = findings.filter(pl.col("body") == "moon-0")
    assert own.height > 0 and {f["rule"] for f in body["findings"]} == set(own["rule"])
    assert body["derived"]["roche_y"] == pytest.approx(1.05, rel=1e-6)
    system = body["system"]
    assert system["parent"]["id"] == "giant-0" and len(system["siblings"]) == 29
    assert system["children"] == [] and body["duplicates"] == 0
    assert not [k for k in body["extra"] if k.startswith(("_", "inner_", "grandparent"))]


def test_parent_lists_its_children_with_their_worst_severity(checked: Path,
                                                             findings: pl.DataFrame) -> None:
    system = queries.body_detail(checked, "giant-0", None)["system"]
    assert len(system["children"]) == 30
    worst = {c["id"]: c["worst"] for c in system["children"]}
    moon0 = findings.filter(pl.col("body") == "moon-0")["severity"].to_list()
    assert worst["moon-0"] == min(moon0, key=SEVERITIES.index)


def test_unknown_body_is_not_found(checked: Path) -> None:
    with pytest.raises(NotFound):
        queries.body_detail(checked, "no-such-body", None)


def test_overview_has_coverage_and_artefacts(checked: Path) -> None:
    result = queries.overview(checked, {"id": "x", "summary": {"rows": 3}})
    coverage = pl.read_parquet(checked / "coverage.parquet")
    assert len(result["coverage"]) == coverage.height > 0
    assert result["summary"] == {"rows": 3} and isinstance(result["artefacts"], list)


def test_a_ring_edge_given_in_planet_radii_shows_in_metres_and_as_given(tmp_path: Path) -> None:
    # `ring outer [R_planet]` on the planet's row: 2.3 of its 58,232 km (Saturn's mean radius,
    # JPL SSD) is 133,934 km; the page shows both.
    source = tmp_path / "ringed.csv"
    source.write_text("id,type,parent,mass_kg,radius_km,a (au),ring outer [R_planet]\n"
                      "S,yellow dwarf star,,1.989e30,695700,,\n"
                      "G,gas giant,S,5.683e26,58232,9.537,2.3\n", encoding="utf-8")
    result = check_file(source, tmp_path / "cat")
    assert result.report is not None
    mapping = {"mapping": result.report.mapping.to_json()}
    body = queries.body_detail(tmp_path / "cat", "G", mapping)
    outer = next(f for f in body["fields"] if f["field"] == "ring_outer")
    assert outer["value"] == pytest.approx(2.3 * 58_232e3, rel=1e-12) and outer["unit"] == "m"
    assert outer["original"] == pytest.approx(2.3) and outer["original_unit"] == "planet_radius"


def test_body_without_a_parent_has_an_empty_system_around_it(checked: Path) -> None:
    # A star (no parent): no parent row and no siblings, and no warning (warnings are errors here).
    star = queries.body_detail(checked, "giant-0", None)["system"]
    assert star["parent"] is not None  # giant-0 orbits a star
    root = star["parent"]["id"]
    system = queries.body_detail(checked, root, None)["system"]
    assert system["parent"] is None and system["siblings"] == []


# --- shapes and stored aggregates ------------------------------------------------------------


def test_results_have_the_keys_their_shapes_declare(checked: Path) -> None:
    page = queries.findings_page(checked, ViewState(limit=1))
    assert set(page) == set(shapes.FindingsPage.__annotations__)
    assert set(page["items"][0]) == set(shapes.Finding.__annotations__)
    body = queries.body_detail(checked, "moon-0", None)
    assert set(body) == set(shapes.BodyDetail.__annotations__)
    assert set(body["fields"][0]) == set(shapes.FieldRow.__annotations__)
    assert set(body["system"]["parent"]) <= set(shapes.Relative.__annotations__)
    overview = queries.overview(checked, {"id": "x"})
    assert set(overview) == set(shapes.Overview.__annotations__)
    assert set(overview["catalogue"]) == set(shapes.CatalogueBrief.__annotations__)
    systems = queries.systems_page(checked, ViewState(limit=1))
    assert set(systems["items"][0]) == set(shapes.SystemRow.__annotations__)


def test_aggregates_of_an_older_version_are_counted_again(checked: Path, tmp_path: Path) -> None:
    # a catalogue stored before diagrams had one registry: its aggregates.json is rewritten in
    # the current shape, with the orbit settings it records (here a 10 % Kepler tolerance)
    cat = Path(shutil.copytree(checked, tmp_path / "cat"))
    (cat / "aggregates.json").write_text(json.dumps(
        {"rows": 1, "mass_radius": None, "orbit_settings": {"kepler_tolerance": 0.1}}))
    fresh = queries.aggregates(cat)
    assert fresh["version"] == VERSION and fresh["rows"] > 1
    kepler = fresh["diagrams"]["orbits"]["kepler"]
    assert {line["at"] for line in kepler["lines"]} == {0.0, -10.0, 10.0}
    assert json.loads((cat / "aggregates.json").read_text())["version"] == VERSION
    assert queries.aggregates(cat) == json.loads(json.dumps(fresh))  # now read as stored
