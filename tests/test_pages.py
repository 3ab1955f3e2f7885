"""HTML screens: what each page shows, its links (state in the URL), escaping and the report."""

from __future__ import annotations

import html
import json
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from engine_output import HOSTILE_LABEL, write_engine_output
from markupsafe import escape
from web_support import SyncClient, asgi_client

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.dashboard.settings import Settings
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.storage.store import Manifest, Store, now, write_json_atomic


def _publish(store: Store) -> str:
    """A ready catalogue made of the hand-written engine output, published by the real Store."""
    cat_id, _source = store.new_upload(".csv")
    store.open_upload(Manifest(id=cat_id, name="Test sector", status="ingesting", created=now()))
    work = write_engine_output(store.workdir(cat_id))
    write_json_atomic(work / "aggregates.json", compute_aggregates(work))
    store.publish(cat_id, rows=107, summary={
        "bad_cells": {"mass": 2}, "unmapped_labels": [],
        "reading_notes": ["mass from 'mass' read in kg (SI): its header names no unit; if it is "
                          "in another, give --unit mass=UNIT"]},
        mapping={"unknown_columns": ["colour"]})
    return cat_id


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[SyncClient, str]]:
    data_dir = tmp_path_factory.mktemp("pages")
    cat_id = _publish(Store(data_dir))
    with asgi_client(create_app(Settings(data_dir=data_dir))) as client:
        yield client, cat_id


def _get(site: tuple[SyncClient, str], path: str, status: int = 200) -> str:
    client, _ = site
    response = client.get(path)
    assert response.status_code == status, response.text[:500]
    return response.text


def _figure(page: str, script_id: str = "figure-data") -> dict[str, Any]:
    found = re.search(rf'<script type="application/json" id="{script_id}">(.*?)</script>', page,
                      re.DOTALL)
    assert found, f"no {script_id} in the page"
    return json.loads(found.group(1))


def _hrefs(page: str) -> list[str]:
    return [html.unescape(h) for h in re.findall(r'href="([^"]+)"', page)]


def test_catalogues_lists_the_catalogue_and_the_upload_box(site: tuple[SyncClient, str]) -> None:
    page = _get(site, "/")
    assert "Test sector" in page and 'id="dropzone"' in page and 'id="file-input"' in page
    assert "/api/catalogues" in _hrefs(page)


def test_overview_numbers_link_to_filtered_findings(site: tuple[SyncClient, str]) -> None:
    cat_id = site[1]
    page = _get(site, f"/catalogues/{cat_id}")
    links = [h for h in _hrefs(page) if "/findings?" in h]
    impossible = next(h for h in links if h.endswith("severity=impossible"))
    state = ViewState.from_query(impossible.split("?", 1)[1])
    assert state.severity == ("impossible",)
    listing = _get(site, impossible)
    assert re.search(r'id="findings-total">2<', listing)
    assert any(h.endswith("rule=inside-rigid-roche") for h in links)
    assert "inside-rigid-roche" in page and "Rule coverage" in page
    assert re.search(r"<code>mass</code></td><td class=\"num\">2<", page)  # bad cells
    assert "How the file was read" in page and "read in kg (SI): its header names no unit" in page


def test_catalogue_text_is_escaped(site: tuple[SyncClient, str]) -> None:
    cat_id = site[1]
    for path in (f"/catalogues/{cat_id}", f"/catalogues/{cat_id}/findings",
                 f"/catalogues/{cat_id}/diagrams?diagram=density"):
        page = _get(site, path)
        assert HOSTILE_LABEL not in page
        assert str(escape(HOSTILE_LABEL)) in page  # as jinja2 escapes it


@pytest.mark.parametrize("diagram, expected", [
    ("density", set()),
    ("mass-radius", {"iron", "rock", "water ice", "cold H/He"}),
    ("roche", {"rigid Roche limit", "fluid Roche limit", "parent surface"}),
    ("orbits", {"Hill radius", "stable prograde limit, circular", "Kepler's third law"}),
])
def test_diagram_pages_embed_figures_with_reference_lines(site: tuple[SyncClient, str],
                                                          diagram: str,
                                                          expected: set[str]) -> None:
    page = _get(site, f"/catalogues/{site[1]}/diagrams?diagram={diagram}")
    figure = _figure(page)
    names = {t["name"].split(" (")[0] for t in figure["data"] if t.get("meta") == "reference"}
    assert expected <= names
    assert '<script src="/static/vendor/plotly.min.js"' in page
    assert f"/api/catalogues/{site[1]}/aggregates?diagram={diagram}" in _hrefs(page)


def test_diagram_page_lists_each_flagged_body_it_draws_as_a_link(
        site: tuple[SyncClient, str]) -> None:
    page = _get(site, f"/catalogues/{site[1]}/diagrams?diagram=roche")
    drawn = {b for t in _figure(page)["data"] if t.get("meta") == "flagged"
             for b in t["customdata"]}
    assert "moon-0" in drawn  # inside the rigid Roche limit in the engine output
    table = page.split('id="drawn-table"', 1)[1].split("</table>", 1)[0]
    assert {h.rsplit("/", 1)[1] for h in _hrefs(table)} == drawn
    assert 'href="#drawn"' in page  # the caption links the table


def test_distribution_choice_lives_in_the_url(site: tuple[SyncClient, str]) -> None:
    page = _get(site, f"/catalogues/{site[1]}/diagrams?diagram=distributions&field=radius"
                      "&label=Gas+giant")
    figure = _figure(page)
    assert [t["name"] for t in figure["data"] if t["type"] == "scatter" and not t.get("meta")] \
        == ["Gas giant"]
    assert re.search(r'<option value="radius" selected>', page)
    assert any(t.get("meta") == "artefact" for t in figure["data"])  # the radius spike


def test_findings_pages_on_the_server_and_exports(site: tuple[SyncClient, str]) -> None:
    page = _get(site, f"/catalogues/{site[1]}/findings?limit=3")
    assert page.count('<span class="badge sev-') >= 3
    hrefs = _hrefs(page)
    assert any(h.endswith("limit=3&offset=3") for h in hrefs)
    assert any("findings.csv" in h for h in hrefs) and any("findings.parquet" in h for h in hrefs)
    last = _get(site, f"/catalogues/{site[1]}/findings?limit=3&offset=6")
    assert 'rel="next"' not in last and 'rel="prev"' in last


def test_bad_query_gets_the_error_page(site: tuple[SyncClient, str]) -> None:
    page = _get(site, f"/catalogues/{site[1]}/findings?severity=bogus", 400)
    assert "severity=" in page and "<h1>400" in page


def test_body_page_shows_fields_findings_and_system(site: tuple[SyncClient, str]) -> None:
    page = _get(site, f"/catalogues/{site[1]}/bodies/moon-0")
    assert "inside-rigid-roche" in page and 'id="derived"' in page
    linear = _figure(page, "system-data-linear")
    names = {t["name"] for t in linear["data"]}
    assert {"rigid Roche zone", "fluid Roche zone", "its Hill sphere"} <= names
    assert 'id="system-data-log"' in page
    assert "<code>colour</code>" in page and "_band_low" not in page  # file columns only
    assert f"/api/catalogues/{site[1]}/bodies/moon-0" in _hrefs(page)


def test_unknown_body_is_a_404_page(site: tuple[SyncClient, str]) -> None:
    page = _get(site, f"/catalogues/{site[1]}/bodies/nobody", 404)
    assert "no body with id" in page


def test_saved_view_shows_title_and_note_above_the_view(site: tuple[SyncClient, str]) -> None:
    client, cat_id = site
    answer = client.post("/api/views", json={"catalogue": cat_id, "title": "Roche <check>",
                                             "query": "diagram=roche", "note": "moon-0!"}).json()
    page = _get(site, answer["url"])
    assert "Roche &lt;check&gt;" in page and "moon-0!" in page
    assert _figure(page)["data"][0]["type"] == "heatmap"
    assert f"/catalogues/{cat_id}/diagrams?diagram=roche" in _hrefs(page)
    assert answer["url"] in _hrefs(_get(site, f"/catalogues/{cat_id}"))


def test_saved_findings_view_and_body_view(site: tuple[SyncClient, str]) -> None:
    client, cat_id = site
    for query, marker in (("severity=note", 'id="findings-total">1<'),
                          ("body=moon-5", 'id="body-id">moon-5<')):
        url = client.post("/api/views", json={"catalogue": cat_id, "title": "t",
                                              "query": query}).json()["url"]
        assert marker in _get(site, url)


def test_report_is_one_self_contained_file(site: tuple[SyncClient, str]) -> None:
    client, cat_id = site
    response = client.get(f"/catalogues/{cat_id}/report.html?diagram=roche&severity=impossible")
    assert response.status_code == 200
    assert "attachment" in response.headers["content-disposition"]
    page = response.text
    assert "/static/" not in page and "<link" not in page
    assert len(page) > 3_000_000  # plotly.js is inline
    figure = _figure(page, "data-1")
    assert any(t.get("meta") == "reference" for t in figure["data"])
    assert "moon-0" in page and "rock-4" in page  # the impossible findings


def test_mapping_step_shows_columns_samples_and_families(tmp_path: Path) -> None:
    csv = "id,kind,m,r\na,Rocky world,1e24,6e6\nb,Frozen moon,2e22,1e6\n"
    with asgi_client(create_app(Settings(data_dir=tmp_path))) as client:
        answer = client.post("/api/catalogues", files={"file": ("x.csv", csv.encode())}).json()
        assert answer["status"] == "mapping"
        page = client.get(answer["url"], follow_redirects=True).text
    assert 'id="mapping-form"' in page and 'data-column="kind"' in page
    assert "<span>1e24</span>" in page
    assert re.search(r'data-label="Frozen moon".*?<option value="ice" selected>', page, re.DOTALL)
