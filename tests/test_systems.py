"""Systems: the per-system summary and one system's tree, as queries and as pages.

A handful of bodies in four named systems (and one without) run through the real engine, so the
findings are the engine's own; expected counts are recomputed here row by row in Python.
"""

from __future__ import annotations

import html
import re
from collections.abc import Iterator
from pathlib import Path
from urllib.parse import quote

import polars as pl
import pytest
from catalogue_builder import EARTH_LIKE, SUN_LIKE, run
from web_support import SyncClient, asgi_client

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.screens import queries
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.dashboard.settings import Settings
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.errors import NotFound
from bodycensus.science.severity import SEVERITIES
from bodycensus.science.units import AU, M_EARTH
from bodycensus.storage.runs import scan_bodies
from bodycensus.storage.store import Manifest, Store, now, write_json_atomic

HOSTILE = "<img src=x onerror=alert(1)>"
ROWS = [
    {**SUN_LIKE, "id": "helm-a", "system": "Helm"},
    {**EARTH_LIKE, "id": "helm-b", "parent": "helm-a", "system": "Helm"},
    # a moon of helm-b (Moon-like numbers, from memory), so the tree has a second level
    {"id": "helm-c", "parent": "helm-b", "system": "Helm", "family": "rock", "mass": 7.3e22,
     "radius": 1.74e6, "semi_major_axis": 3.84e8, "eccentricity": 0.05},
    # 10 Earth masses in 2,000 km: far denser than iron, so an impossible finding
    {**EARTH_LIKE, "id": "helm-d", "parent": "helm-a", "system": "Helm", "mass": 10 * M_EARTH,
     "radius": 2.0e6, "semi_major_axis": 2 * AU, "period": None},
    {**SUN_LIKE, "id": "quiet-a", "system": "Quiet"},
    {**EARTH_LIKE, "id": "quiet-b", "parent": "quiet-a", "system": "Quiet"},
    {**SUN_LIKE, "id": "x-a", "system": HOSTILE},
    {**SUN_LIKE, "id": "far-a", "system": "Far/Reach"},
    {**EARTH_LIKE, "id": "drifter", "parent": None},
]


@pytest.fixture(scope="module")
def published(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, str]:
    """The rows checked by the real engine and published by the real Store."""
    data_dir = tmp_path_factory.mktemp("systems")
    store = Store(data_dir)
    cat_id, _source = store.new_upload(".csv")
    store.open_upload(Manifest(id=cat_id, name="Systems test", status="ingesting", created=now()))
    work = store.workdir(cat_id)
    run(ROWS, work)
    write_json_atomic(work / "aggregates.json", compute_aggregates(work))
    store.publish(cat_id, rows=len(ROWS), summary={}, mapping={})
    return data_dir, cat_id


@pytest.fixture(scope="module")
def cat_dir(published: tuple[Path, str]) -> Path:
    data_dir, cat_id = published
    return Store(data_dir).ready_dir(cat_id)


@pytest.fixture(scope="module")
def site(published: tuple[Path, str]) -> Iterator[tuple[SyncClient, str]]:
    data_dir, cat_id = published
    with asgi_client(create_app(Settings(data_dir=data_dir))) as client:
        yield client, cat_id


def _expected(cat_dir: Path) -> dict[str, dict[str, int]]:
    """Per system, bodies and findings per severity, counted row by row (independent of polars'
    group_by)."""
    bodies = scan_bodies(cat_dir).collect().to_dicts()
    system_of = {b["id"]: b["system"] or queries.NO_SYSTEM for b in bodies}
    out: dict[str, dict[str, int]] = {}
    for b in bodies:
        out.setdefault(system_of[b["id"]], dict.fromkeys(("bodies", *SEVERITIES), 0))["bodies"] += 1
    for f in pl.read_parquet(cat_dir / "findings.parquet").to_dicts():
        out[system_of[f["body"]]][f["severity"]] += 1
    return out


def test_every_system_once_with_independent_counts(cat_dir: Path) -> None:
    page = queries.systems_page(cat_dir, ViewState())
    expected = _expected(cat_dir)
    assert page["total"] == len(expected) == 5
    got = {i["system"]: {"bodies": i["bodies"], **i["counts"]} for i in page["items"]}
    assert got == expected
    for item in page["items"]:
        assert item["findings"] == sum(item["counts"].values())


def test_most_serious_system_first_with_its_primary_and_worst_body(cat_dir: Path) -> None:
    items = queries.systems_page(cat_dir, ViewState())["items"]
    ranks = [SEVERITIES.index(i["worst"]) if i["worst"] else len(SEVERITIES) for i in items]
    assert ranks == sorted(ranks)
    helm = items[0]
    assert helm["system"] == "Helm" and helm["primary"] == "helm-a"
    assert helm["worst_body"] == "helm-d" and helm["counts"]["impossible"] >= 1
    drifters = next(i for i in items if i["system"] == queries.NO_SYSTEM)
    assert drifters["bodies"] == 1 and drifters["primary"] == "drifter"


def test_filter_by_worst_severity_and_pages(cat_dir: Path) -> None:
    everything = queries.systems_page(cat_dir, ViewState())["items"]
    worst = everything[0]["worst"]
    only = queries.systems_page(cat_dir, ViewState(severity=(worst,)))
    assert only["total"] == sum(i["worst"] == worst for i in everything)
    assert {i["worst"] for i in only["items"]} == {worst}
    pages = [queries.systems_page(cat_dir, ViewState(limit=2, offset=o))["items"]
             for o in (0, 2, 4)]
    assert [i["system"] for p in pages for i in p] == [i["system"] for i in everything]


def test_system_detail_is_a_tree_in_depth_first_order(cat_dir: Path) -> None:
    detail = queries.system_detail(cat_dir, "Helm")
    assert detail["total"] == detail["shown"] == 4 and not detail["capped"]
    rows = {r["id"]: r for r in detail["bodies"]}
    assert detail["bodies"][0]["id"] == "helm-a"
    assert (rows["helm-a"]["depth"], rows["helm-b"]["depth"], rows["helm-c"]["depth"]) == (0, 1, 2)
    assert sorted(rows["helm-a"]["children"]) == ["helm-b", "helm-d"]
    order = [r["id"] for r in detail["bodies"]]
    assert order.index("helm-c") == order.index("helm-b") + 1  # a child right under its parent
    assert rows["helm-d"]["worst"] == "error" and rows["helm-d"]["findings"] == 2
    assert rows["helm-b"]["worst"] is None and rows["helm-b"]["findings"] == 0


@pytest.mark.parametrize("cap", [3, 4])
def test_a_system_past_the_cap_is_counted_whole_and_shown_in_part(
        cat_dir: Path, cap: int, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(queries, "MAX_SYSTEM_BODIES", cap)
    detail = queries.system_detail(cat_dir, "Helm")
    assert (detail["total"], detail["shown"], detail["capped"]) == (4, cap, cap < 4)


def test_blank_system_and_unknown_system(cat_dir: Path) -> None:
    assert [r["id"] for r in queries.system_detail(cat_dir, queries.NO_SYSTEM)["bodies"]] == [
        "drifter"]
    with pytest.raises(NotFound):
        queries.system_detail(cat_dir, "Nowhere")


def test_a_parent_cycle_still_lists_every_body_once(tmp_path: Path) -> None:
    run([{"id": "p", "parent": "q", "system": "Loop", "mass": M_EARTH, "radius": 6.4e6},
         {"id": "q", "parent": "p", "system": "Loop", "mass": M_EARTH, "radius": 6.4e6}],
        tmp_path)
    ids = [r["id"] for r in queries.system_detail(tmp_path, "Loop")["bodies"]]
    assert sorted(ids) == ["p", "q"]


def _get(site: tuple[SyncClient, str], path: str, status: int = 200) -> str:
    client, _ = site
    response = client.get(path)
    assert response.status_code == status, response.text[:500]
    return response.text


def _hrefs(page: str) -> list[str]:
    return [html.unescape(h) for h in re.findall(r'href="([^"]+)"', page)]


def test_systems_page_links_systems_and_worst_bodies(site: tuple[SyncClient, str]) -> None:
    _, cat_id = site
    page = _get(site, f"/catalogues/{cat_id}/systems")
    hrefs = _hrefs(page)
    assert f"/catalogues/{cat_id}/systems/Helm" in hrefs
    assert f"/catalogues/{cat_id}/systems/Far%2FReach" in hrefs
    assert f"/catalogues/{cat_id}/bodies/helm-d" in hrefs  # Helm's worst body
    assert 'aria-current="page">Systems</a>' in page
    assert '<span class="badge sev-error">error</span>' in page
    filtered = _get(site, f"/catalogues/{cat_id}/systems?severity=error")
    assert "systems/Quiet" not in filtered and "systems/Helm" in filtered


def test_system_page_shows_the_tree_with_body_links(site: tuple[SyncClient, str]) -> None:
    _, cat_id = site
    page = _get(site, f"/catalogues/{cat_id}/systems/Helm")
    for body in ("helm-a", "helm-b", "helm-c", "helm-d"):
        assert f"/catalogues/{cat_id}/bodies/{body}" in _hrefs(page)
    assert 'class="tree-cell depth-2"' in page
    slash = _get(site, f"/catalogues/{cat_id}/systems/Far%2FReach")
    assert "far-a" in slash
    _get(site, f"/catalogues/{cat_id}/systems/Nowhere", status=404)
    _get(site, f"/catalogues/{cat_id}/systems?severity=worst", status=400)


def test_body_page_links_its_system(site: tuple[SyncClient, str]) -> None:
    _, cat_id = site
    page = _get(site, f"/catalogues/{cat_id}/bodies/helm-c")
    assert f"/catalogues/{cat_id}/systems/Helm" in _hrefs(page)


def test_a_hostile_system_name_is_text(site: tuple[SyncClient, str]) -> None:
    _, cat_id = site
    listing = _get(site, f"/catalogues/{cat_id}/systems")
    detail = _get(site, f"/catalogues/{cat_id}/systems/{quote(HOSTILE, safe='')}")
    for page in (listing, detail):
        assert HOSTILE not in page and "<img" not in page
        assert "&lt;img src=x onerror=alert(1)&gt;" in page  # shown as text


def test_the_list_links_its_json_twin_which_is_the_same_data(site: tuple[SyncClient, str],
                                                             cat_dir: Path) -> None:
    client, cat_id = site
    page = _get(site, f"/catalogues/{cat_id}/systems?severity=error&limit=2")
    twin = f"/api/catalogues/{cat_id}/systems?severity=error&limit=2"
    assert twin in _hrefs(page)
    answer = client.get(twin)
    assert answer.status_code == 200
    assert answer.json() == queries.systems_page(cat_dir, ViewState(severity=("error",), limit=2))
    assert client.get(f"/api/catalogues/{cat_id}/systems?limit=0").status_code in (400, 422)
