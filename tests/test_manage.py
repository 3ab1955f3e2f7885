"""Catalogues one can manage, through the real app in process: rename, re-run with another
mapping (the uploaded file is kept; no new upload), delete; mapping presets per header; the
mapping step's id choices; a file with nothing physical refused at upload; pages of a catalogue
still mapping open its mapping step; the System page's JSON twin; search from the address."""

from __future__ import annotations

from pathlib import Path

import pytest
from web_support import ROWS, api_settings, asgi_client, assert_error, upload, wait_done

from bodycensus.dashboard.app import create_app

ODD = "key,kind,m_earth,radius_km,host\nA,red dwarf,100000,200000,\nb,terrestrial world,1,6371,A\n"


def test_rename_rerun_with_another_family_and_delete(tmp_path: Path, source: bytes) -> None:
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        cat_id = upload(client, "c.csv", source).json()["id"]
        assert wait_done(client, cat_id)["status"] == "ready"
        renamed = client.patch(f"/api/catalogues/{cat_id}", json={"name": "Sector 7"})
        assert renamed.status_code == 200 and renamed.json()["name"] == "Sector 7"
        kept = tmp_path / "catalogues" / cat_id / "source.csv"
        assert kept.read_bytes() == source  # kept for re-runs

        rerun = client.post(f"/api/catalogues/{cat_id}/rerun").json()
        assert rerun["status"] == "mapping" and rerun["run"] == 2
        assert rerun["url"] == f"/catalogues/{cat_id}/mapping"
        page = client.get(rerun["url"]).text
        assert "Map the columns" in page and "the previous run" in page
        # the previous results stay on disk until the new run is published
        assert (tmp_path / "catalogues" / cat_id / "findings.parquet").is_file()
        columns = rerun["proposal"]["columns"]
        mapped = {"id": "id", "name": "name", "label": "type", "parent": "parent",
                  "mass": "mass [earth_mass]", "radius": "radius_km", "semi_major_axis": "a (AU)"}
        answer = client.post(f"/api/catalogues/{cat_id}/mapping", json={
            "map": mapped, "families": {"Icy moon": "rock_ice"}})
        assert answer.status_code == 202, answer.text
        done = wait_done(client, cat_id)
        assert done["status"] == "ready" and done["run"] == 2 and done["name"] == "Sector 7"
        assert done["rows"] == ROWS and done["summary"]["label_families"]["Icy moon"] == "rock_ice"
        assert set(columns) >= set(mapped.values())
        assert list((tmp_path / "incoming").iterdir()) == []

        assert client.delete(f"/api/catalogues/{cat_id}").status_code == 204
        assert not (tmp_path / "catalogues" / cat_id).exists()
        assert client.get(f"/api/catalogues/{cat_id}").status_code == 404


def test_a_rerun_can_be_given_up_and_the_results_come_back(tmp_path: Path, source: bytes) -> None:
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        cat_id = upload(client, "c.csv", source).json()["id"]
        wait_done(client, cat_id)
        client.post(f"/api/catalogues/{cat_id}/rerun")
        findings = client.get(f"/api/catalogues/{cat_id}/findings")
        assert_error(findings, 409, "conflict")  # the API says it plainly
        page = client.get(f"/catalogues/{cat_id}/findings")
        assert page.status_code == 303 and page.headers["location"] == f"/catalogues/{cat_id}"
        back = client.delete(f"/api/catalogues/{cat_id}/rerun").json()
        assert back["status"] == "ready" and back["run"] == 1
        assert client.get(f"/api/catalogues/{cat_id}/findings").status_code == 200


def test_a_catalogue_still_mapping_opens_its_mapping_step(tmp_path: Path) -> None:
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        answer = upload(client, "odd.csv", ODD.encode()).json()
        assert answer["status"] == "mapping"
        for page in ("", "/findings", "/bodies", "/diagrams?diagram=roche", "/systems"):
            response = client.get(f"/catalogues/{answer['id']}{page}", follow_redirects=True)
            assert response.status_code == 200 and 'id="mapping-form"' in response.text, page
            assert "<title>Map the columns · odd.csv" in response.text
        step = client.get(f"/catalogues/{answer['id']}/mapping").text
        assert 'id="id-missing"' in step and "hidden" not in step.split('id="id-missing"')[1][:40]
        assert "no word of composition or kind in the label" not in step  # red dwarf, rocky...
        assert "turns off" in step


def test_ids_from_row_numbers_and_a_preset_for_the_next_upload(tmp_path: Path) -> None:
    choice = {"map": {"id": "<row number>", "name": "key", "label": "kind", "mass": "m_earth",
                      "radius": "radius_km"},
              "units": {"mass": "earth_mass", "radius": "km"}, "families": {},
              "save_preset": True}
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        first = upload(client, "odd.csv", ODD.encode()).json()["id"]
        assert client.post(f"/api/catalogues/{first}/mapping", json=choice).status_code == 202
        done = wait_done(client, first)
        assert done["status"] == "ready", done["error"]
        row = client.get(f"/api/catalogues/{first}/bodies/row 2").json()
        assert {f["field"]: f["value"] for f in row["fields"]}["name"] == "b"
        again = upload(client, "odd-again.csv", ODD.encode()).json()
        assert again["status"] == "ingesting"  # the preset of this header maps it at once
        second = wait_done(client, again["id"])
        assert second["status"] == "ready" and second["preset"].endswith("from odd.csv")
        assert second["options"]["map"] == choice["map"]


def test_one_column_may_feed_both_the_id_and_the_name(tmp_path: Path) -> None:
    text = "designation,kind,m_earth,radius_km\nVela b,terrestrial world,1,6371\n"
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        cat_id = upload(client, "shared.csv", text.encode()).json()["id"]
        choice = {"map": {"id": "designation", "name": "designation", "label": "kind",
                          "mass": "m_earth", "radius": "radius_km"},
                  "units": {"mass": "earth_mass", "radius": "km"}}
        assert client.post(f"/api/catalogues/{cat_id}/mapping", json=choice).status_code == 202
        assert wait_done(client, cat_id)["status"] == "ready"
        body = client.get(f"/api/catalogues/{cat_id}/bodies/Vela b").json()
        fields = {f["field"]: f["value"] for f in body["fields"]}
        assert fields["id"] == fields["name"] == "Vela b"


@pytest.mark.parametrize("name, text", [
    ("names.txt", "name\nAlpha\nBeta\nGamma\n"),
    ("tags.csv", "id,colour\na,red\nb,blue\n"),
])
def test_a_file_with_nothing_physical_is_refused_at_upload(tmp_path: Path, name: str,
                                                           text: str) -> None:
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        body = assert_error(upload(client, name, text.encode()), 422, "bad_input")
    assert body["detail"].startswith(f"{name}: no column holds a physical quantity")
    assert list((tmp_path / "incoming").iterdir()) == []


def test_system_twin_search_and_clean_addresses(tmp_path: Path, source: bytes) -> None:
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        cat_id = upload(client, "c.csv", source).json()["id"]
        wait_done(client, cat_id)
        base = f"/catalogues/{cat_id}"
        twin = client.get(f"/api{base}/systems/(no system)").json()
        assert twin["total"] == ROWS and twin["bodies"][0]["depth"] == 0
        page = client.get(f"{base}/systems/(no system)").text
        assert f'href="/api{base}/systems/%28no%20system%29"' in page
        hit = client.get(f"{base}/search", params={"q": "GIANT-0"})
        assert hit.status_code == 303 and hit.headers["location"] == f"{base}/bodies/giant-0"
        listed = client.get(f"{base}/search", params={"q": "moon 1"}).text
        assert "Moon 10" in listed and 'id="search-table"' in listed
        dirty = client.get(f"{base}/findings", params={"rule": "", "severity": "error",
                                                       "min_value": ""})
        assert dirty.status_code == 303 and dirty.headers["location"] == \
            f"{base}/findings?severity=error"


def test_a_saved_view_of_the_new_screens_opens_them(tmp_path: Path, source: bytes) -> None:
    """The Bodies list, the groups and a search are saved with ``screen=`` in their query (the
    address alone would open the Findings list) and open as themselves."""
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        cat_id = upload(client, "c.csv", source).json()["id"]
        wait_done(client, cat_id)
        for query, marker in (("screen=bodies&label=Gas+giant", 'id="bodies-table"'),
                              ("screen=groups&severity=impossible", 'id="groups-table"'),
                              ("screen=search&q=moon", 'id="search-table"')):
            view = client.post("/api/views", json={"catalogue": cat_id, "query": query,
                                                   "title": "t", "note": ""}).json()
            page = client.get(view["url"]).text
            assert marker in page and 'id="saved-title"' in page, query
