"""The lists beyond Findings, on a catalogue checked by the real engine: the Bodies list (every
body, the Findings filters, orders, exports), findings grouped by rule and label, search by id
or name, and a diagram's region as a filter.

Expected values are computed here with eager polars over the engine's own files."""

from __future__ import annotations

import io
import math
from pathlib import Path

import polars as pl
import pytest
from web_support import write_catalogue

from bodycensus.dashboard.screens import groups, regions, tables
from bodycensus.dashboard.screens.bodies import bodies_page, export_bodies
from bodycensus.dashboard.screens.queries import findings_page
from bodycensus.dashboard.screens.search import names_for, search_bodies
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams.mass_radius import MASS, RADIUS
from bodycensus.engines.local import check_file
from bodycensus.errors import BadInput
from bodycensus.science.severity import SEVERITIES
from bodycensus.storage.runs import scan_bodies


@pytest.fixture(scope="module")
def checked(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("lists")
    check_file(write_catalogue(root / "catalogue.csv"), root / "cat")
    return root / "cat"


@pytest.fixture(scope="module")
def bodies(checked: Path) -> pl.DataFrame:
    return scan_bodies(checked).collect()


@pytest.fixture(scope="module")
def findings(checked: Path) -> pl.DataFrame:
    return pl.read_parquet(checked / "findings.parquet")


def test_every_body_in_the_files_order(checked: Path, bodies: pl.DataFrame) -> None:
    page = bodies_page(checked, ViewState(limit=10))
    assert page["total"] == bodies.height
    assert [r["_row"] for r in page["items"]] == list(range(1, 11))
    last = bodies_page(checked, ViewState(order="-_row", limit=1))["items"][0]
    assert last["_row"] == bodies["_row"].max()


def test_a_finding_filter_keeps_the_bodies_with_such_a_finding(checked: Path,
                                                                findings: pl.DataFrame) -> None:
    state = ViewState(severity=("impossible",), limit=1000)
    page = bodies_page(checked, state)
    expected = set(findings.filter(pl.col("severity") == "impossible")["body"])
    assert {r["id"] for r in page["items"]} == expected and page["total"] == len(expected)
    worst = {r["id"]: r["worst"] for r in page["items"]}
    for body in expected:  # each body's worst finding, as the findings say
        mine = findings.filter(pl.col("body") == body)["severity"].to_list()
        assert worst[body] == min(mine, key=SEVERITIES.index)


def test_label_filter_and_orders(checked: Path, bodies: pl.DataFrame) -> None:
    state = ViewState(label=("Gas giant",), order="-mass", limit=5)
    page = bodies_page(checked, state)
    giants = bodies.filter(pl.col("label") == "Gas giant").sort("mass", descending=True)
    assert page["total"] == giants.height
    assert [r["id"] for r in page["items"]] == giants["id"].head(5).to_list()
    by_worst = bodies_page(checked, ViewState(order="worst", limit=1000))["items"]
    assert by_worst[0]["worst"] == "error" and len(by_worst) == min(1000, bodies.height)
    ranks = [SEVERITIES.index(b["worst"]) if b["worst"] else len(SEVERITIES) for b in by_worst]
    assert ranks == sorted(ranks)  # every flagged body first, then the clean in file order
    clean = [b["_row"] for b in by_worst if b["worst"] is None]
    assert clean == sorted(clean) and len({b["id"] for b in by_worst}) == len(by_worst)
    most = bodies_page(checked, ViewState(order="-findings", limit=2))["items"]
    assert most[0]["findings"] >= most[1]["findings"]


def test_bodies_export_is_every_filtered_body(checked: Path, tmp_path: Path,
                                              bodies: pl.DataFrame) -> None:
    dest = export_bodies(checked, ViewState(family=("rock",)), "csv", tmp_path / "b.csv")
    exported = pl.read_csv(dest, infer_schema_length=0)
    assert exported.height == bodies.filter(pl.col("family") == "rock").height
    assert {"id", "name", "system", "parent", "worst", "findings"} <= set(exported.columns)


def test_groups_count_every_finding_once_with_three_examples(checked: Path,
                                                             findings: pl.DataFrame) -> None:
    found = groups.groups(checked, ViewState())
    assert sum(g["findings"] for g in found) == findings.height
    for g in found:
        mine = findings.filter(pl.col("rule") == g["rule"],
                               pl.col("label").eq_missing(g["label"]))
        assert g["findings"] == mine.height and g["bodies"] == mine["body"].n_unique()
        assert g["counts"] == {s: n for s, n in mine["severity"].value_counts().iter_rows()
                               if n} and g["worst"] == min(g["counts"], key=SEVERITIES.index)
        assert len(g["examples"]) == min(3, g["bodies"])  # distinct bodies
        assert len({e["body"] for e in g["examples"]}) == len(g["examples"])
        margins = mine["margin"].drop_nulls()
        if margins.len():
            assert g["worst_margin"] == pytest.approx(margins.max())
    ranks = [SEVERITIES.index(g["worst"]) for g in found]
    assert ranks == sorted(ranks)
    assert (checked / groups.GROUPS_FILE).is_file()  # kept for the next request


def test_groups_follow_the_filters(checked: Path, findings: pl.DataFrame) -> None:
    found = groups.groups(checked, ViewState(severity=("error",)))
    assert sum(g["findings"] for g in found) == findings.filter(
        pl.col("severity") == "error").height


def test_search_by_id_and_by_name(checked: Path) -> None:
    exact = search_bodies(checked, "giant-0")
    assert exact["exact"] == "giant-0" and exact["items"][0]["id"] == "giant-0"
    assert exact["items"][0]["label"] == "Gas giant" and exact["items"][0]["parent"] == "star-1"
    by_name = search_bodies(checked, "moon 1")
    assert {i["name"] for i in by_name["items"]} >= {"Moon 1", "Moon 10", "Moon 19"}
    assert all(i["name"].lower().startswith("moon 1") for i in by_name["items"])
    assert names_for(checked, ["giant-0", "moon-3"]) == {"giant-0": "Giant 0", "moon-3": "Moon 3"}


def test_a_box_on_the_mass_radius_diagram_keeps_the_bodies_drawn_inside(
        checked: Path, bodies: pl.DataFrame, findings: pl.DataFrame) -> None:
    # log10 Earth masses 0..1, log10 Earth radii -0.2..0.5: the rocky worlds near 1-2 M_earth
    state = ViewState(region_of="mass-radius", region="0,1,-0.2,0.5", limit=1000)
    inside = bodies.filter(MASS.expr().is_between(0, 1), RADIUS.expr().is_between(-0.2, 0.5))
    page = bodies_page(checked, state)
    assert page["total"] == inside.height > 0
    assert {r["id"] for r in page["items"]} == set(inside["id"])
    listed = findings_page(checked, state)
    assert listed["total"] == findings.filter(pl.col("body").is_in(inside["id"])).height


def test_a_lasso_is_a_polygon_in_the_diagrams_coordinates(checked: Path,
                                                          bodies: pl.DataFrame) -> None:
    # a triangle with corners (0, -0.2), (1, -0.2), (0, 0.5): x / 1 + (y + 0.2) / 0.7 < 1
    state = ViewState(region_of="mass-radius", lasso="0 -0.2;1 -0.2;0 0.5", limit=1000)
    x, y = MASS.expr(), RADIUS.expr()
    expected = bodies.filter(x >= 0, y > -0.2, x + (y + 0.2) / 0.7 < 1)  # left edge: inside
    got = {r["id"] for r in bodies_page(checked, state)["items"]}
    assert got == set(expected["id"]) and got


def test_a_region_on_a_histogram_spans_x_only_and_bad_regions_are_refused(
        checked: Path, bodies: pl.DataFrame) -> None:
    state = ViewState(region_of="distributions", field="density", region="3.5,3.7",
                      label=("Rocky world",), limit=1000)
    expected = bodies.filter(pl.col("label") == "Rocky world",
                             pl.col("density").log10().is_between(3.5, 3.7))
    assert bodies_page(checked, state)["total"] == expected.height > 0
    assert regions.describe(state) == "a box drawn on the Distributions diagram (density)"
    with pytest.raises(BadInput):
        regions.region_filter(ViewState(region_of="nowhere", region="0,1"))
    with pytest.raises(BadInput):
        regions.region_filter(ViewState(region_of="mass-radius", region="0,1,2"))


def test_tables_read_a_handful_of_rows(checked: Path) -> None:
    rows = tables.rows_of(checked, ["moon-0", "nope"], ["id", "label", "system", "no-such"])
    assert rows["id"].to_list() == ["moon-0"] and rows.columns == ["id", "label", "system"]
    worst = tables.worst_of(checked, ["moon-0", "star-0"])
    assert worst["moon-0"][0] == "impossible" and not math.isnan(worst["moon-0"][1])
    assert pl.read_parquet(io.BytesIO((checked / "names.parquet").read_bytes())).height > 0
