"""The JSON API on the real app in process: uploads, the mapping step, findings, exports,
bodies, views, the error shape and size limits (restarts and uvicorn: test_api_lifecycle.py)."""

from __future__ import annotations

import csv
import gzip
import io
from collections.abc import Iterator
from pathlib import Path

import polars as pl
import pytest
from web_support import (
    FORMULA_LABEL,
    LIMIT,
    ROWS,
    SyncClient,
    api_settings,
    asgi_client,
    assert_error,
    data_entries,
    upload,
    wait_done,
    write_catalogue,
)

from bodycensus.dashboard.app import create_app
from bodycensus.science.units import M_EARTH, M_SUN
from bodycensus.storage.triage import DECISION_COLUMNS


@pytest.fixture(scope="module")
def served(tmp_path_factory: pytest.TempPathFactory, source: bytes
           ) -> Iterator[tuple[SyncClient, str, Path]]:
    """One app on one data dir with one ready catalogue, shared by the read-only tests."""
    data_dir = tmp_path_factory.mktemp("data")
    with asgi_client(create_app(api_settings(data_dir))) as client:
        response = upload(client, "c.csv", source)
        assert response.status_code == 202, response.text
        cat_id = response.json()["id"]
        assert wait_done(client, cat_id)["status"] == "ready"
        yield client, cat_id, data_dir


@pytest.fixture(scope="module")
def findings(served: tuple[SyncClient, str, Path]) -> pl.DataFrame:
    _, cat_id, data_dir = served
    return pl.read_parquet(data_dir / "catalogues" / cat_id / "findings.parquet")


# --- upload and status ---------------------------------------------------------------------


def test_upload_answers_202_then_becomes_ready(tmp_path: Path, source: bytes) -> None:
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        response = upload(client, "../../etc/c.csv", source)
        assert response.status_code == 202
        accepted = response.json()
        assert set(accepted) == {"id", "status", "url"} and accepted["status"] == "ingesting"
        assert accepted["url"] == f"/catalogues/{accepted['id']}"
        done = wait_done(client, accepted["id"])
    assert (done["status"], done["rows"], done["error"]) == ("ready", ROWS, None)
    assert done["name"] == "c.csv" and done["progress"] == {"stage": "done", "fraction": 1.0}
    assert done["summary"]["rows"] == ROWS and done["mapping"]["mapping"]["choices"]["mass"][
        "unit"] == "earth_mass"
    assert sorted(p.name for p in (tmp_path / "catalogues" / accepted["id"]).iterdir()) == [
        "aggregates.json", "artefacts.parquet", "bodies", "bodies_by_row.parquet",
        "body_index.parquet",
        "coverage.parquet", "findings.parquet", "findings_by_body.parquet",
        "findings_by_system.parquet", "manifest.json", "names.parquet", "source.csv",
        "system_index.parquet", "systems.parquet"]
    assert list((tmp_path / "incoming").iterdir()) == []


def test_catalogue_list_and_reads(served: tuple[SyncClient, str, Path]) -> None:
    client, cat_id, _ = served
    listed = client.get("/api/catalogues").json()["items"]
    assert [c["id"] for c in listed] == [cat_id] and listed[0]["summary"] is None
    coverage = client.get(f"/api/catalogues/{cat_id}/coverage").json()
    assert coverage and {"rule", "evaluated", "skipped"} <= set(coverage[0])
    assert isinstance(client.get(f"/api/catalogues/{cat_id}/artefacts").json(), list)
    whole = client.get(f"/api/catalogues/{cat_id}/aggregates").json()
    assert whole["rows"] == ROWS and "diagrams" not in whole  # each diagram at its own address
    one = client.get(whole["diagram_urls"]["mass-radius"]).json()
    assert one["rows"] == ROWS and list(one["diagrams"]) == ["mass-radius"]
    assert one["diagrams"]["mass-radius"]["x_edges"]
    two = client.get(f"/api/catalogues/{cat_id}/aggregates",
                     params=[("diagram", "roche"), ("diagram", "density")]).json()
    assert list(two["diagrams"]) == ["roche", "density"]
    assert_error(client.get(f"/api/catalogues/{cat_id}/aggregates",
                            params={"diagram": "nosuch"}), 400, "bad_input")
    overview = client.get(f"/api/catalogues/{cat_id}/overview").json()
    assert overview["summary"]["rows"] == ROWS


# --- findings ------------------------------------------------------------------------------


def test_findings_filter_sort_and_paginate(served: tuple[SyncClient, str, Path],
                                           findings: pl.DataFrame) -> None:
    client, cat_id, _ = served
    url = f"/api/catalogues/{cat_id}/findings"
    params = [("severity", "impossible"), ("severity", "error"), ("sort", "-margin"),
              ("limit", "3")]
    first = client.get(url, params=params).json()
    expected = findings.filter(pl.col("severity").is_in(["impossible", "error"]))
    assert first["total"] == expected.height > 3 and len(first["items"]) == 3
    rest = client.get(url, params=[*params, ("offset", "3"), ("limit", "1000")]).json()["items"]
    items = first["items"] + rest
    assert sorted((i["body"], i["rule"]) for i in items) == sorted(
        zip(expected["body"], expected["rule"], strict=True))
    margins = [i["margin"] for i in items if i["margin"] is not None]
    assert margins == sorted(margins, reverse=True)
    assert {"body", "rule", "severity", "value", "limit", "margin", "message", "source",
            "_row"} <= set(items[0])
    label = client.get(url, params={"label": FORMULA_LABEL}).json()
    assert label["total"] == findings.filter(pl.col("label") == FORMULA_LABEL).height > 0


def test_csv_export_neutralises_formulas(served: tuple[SyncClient, str, Path],
                                         findings: pl.DataFrame) -> None:
    client, cat_id, data_dir = served
    response = client.get(f"/api/catalogues/{cat_id}/findings.csv",
                          params={"label": FORMULA_LABEL})
    assert response.status_code == 200 and response.headers["content-type"].startswith("text/csv")
    assert "attachment" in response.headers["content-disposition"]
    rows = list(csv.DictReader(io.StringIO(response.text)))
    assert len(rows) == findings.filter(pl.col("label") == FORMULA_LABEL).height > 0
    assert {r["label"] for r in rows} == {"'" + FORMULA_LABEL}
    assert list((data_dir / "tmp").iterdir()) == []  # the scratch file went after sending


def test_parquet_export_reads_back(served: tuple[SyncClient, str, Path],
                                   findings: pl.DataFrame) -> None:
    client, cat_id, _ = served
    response = client.get(f"/api/catalogues/{cat_id}/findings.parquet",
                          params={"severity": "error"})
    assert response.status_code == 200
    exported = pl.read_parquet(io.BytesIO(response.content))
    expected = findings.filter(pl.col("severity") == "error")
    assert exported.height == expected.height > 0
    assert exported.columns[:4] == ["body", "name", "system", "parent"]  # names beside ids
    assert sorted(exported.columns) == sorted([*findings.columns, *DECISION_COLUMNS])


def test_body_detail(served: tuple[SyncClient, str, Path]) -> None:
    client, cat_id, _ = served
    body = client.get(f"/api/catalogues/{cat_id}/bodies/moon-0").json()
    mass = next(f for f in body["fields"] if f["field"] == "mass")
    assert mass["value"] == pytest.approx(1.7e-4 * M_EARTH) and mass["original"] == \
        pytest.approx(1.7e-4)
    assert body["system"]["parent"]["id"] == "giant-0" and body["findings"]
    slash = client.get(f"/api/catalogues/{cat_id}/bodies/sys/7")
    assert slash.status_code == 200 and slash.json()["id"] == "sys/7"
    assert_error(client.get(f"/api/catalogues/{cat_id}/bodies/nobody"), 404, "not_found")


# --- saved views ---------------------------------------------------------------------------


def test_views_save_get_list(served: tuple[SyncClient, str, Path]) -> None:
    client, cat_id, _ = served
    saved = client.post("/api/views", json={
        "catalogue": cat_id, "query": "sort=-margin&severity=impossible&limit=50",
        "title": "Roche suspects", "note": "<b>check</b> these"})
    assert saved.status_code == 201
    view = saved.json()
    assert view["url"] == f"/v/{view['slug']}"
    assert view["query"] == "severity=impossible&sort=-margin"
    assert client.get(f"/api/views/{view['slug']}").json() == view
    assert view in client.get(f"/api/catalogues/{cat_id}/views").json()["items"]
    assert client.get(view["url"]).status_code == 200  # the page itself is the front end's
    assert_error(client.post("/api/views", json={"catalogue": cat_id, "query": "severity=x",
                                                  "title": "t"}), 400, "bad_input")
    assert_error(client.post("/api/views", json={"catalogue": "nope1234", "title": "t"}), 404,
                  "not_found")
    assert_error(client.get("/api/views/unknown"), 404, "not_found")


# --- the error shape -----------------------------------------------------------------------


@pytest.mark.parametrize(("path", "status", "code"), [
    ("/api/nothing-here", 404, "not_found"),
    ("/api/catalogues/nope1234", 404, "not_found"),
    ("/api/catalogues/..%2F..%2Fetc", 404, "not_found"),
    ("/api/catalogues/{id}/findings?limit=0", 422, "bad_input"),
    ("/api/catalogues/{id}/findings?sort=evil", 400, "bad_input"),
    ("/api/catalogues/{id}/findings?min_value=nan", 400, "bad_input"),
])
def test_error_shape(served: tuple[SyncClient, str, Path], path: str, status: int,
                     code: str) -> None:
    client, cat_id, _ = served
    assert_error(client.get(path.replace("{id}", cat_id)), status, code)


def test_pages_get_an_error_page_not_json(served: tuple[SyncClient, str, Path]) -> None:
    client, _, _ = served
    response = client.get("/catalogues/nope1234")
    assert response.status_code == 404 and not response.headers["content-type"].startswith(
        "application/json")
    assert "nope1234" in response.text


def _gz_truncated() -> bytes:
    return gzip.compress(b"id,mass\n" + b"a,1\n" * 1000)[:40]


@pytest.mark.parametrize(("name", "content", "auto", "status"), [
    ("empty.csv", b"", False, 422),
    ("header.csv", b"id,mass [kg],radius [m]\n", False, 422),
    ("sheet.xlsx", b"PK\x03\x04", False, 415),
    ("broken.csv.gz", _gz_truncated(), False, 422),
    ("noid.csv", b"name,mass [kg]\nA,1\n", True, 422),
    ("bad.ndjson", b'{"id": "a"}\n{"id": \n', False, 422),
    ("wide.csv", (",".join(f"c{i}" for i in range(60)) + "\n" + "1," * 59 + "1\n").encode(),
     False, 413),
], ids=["empty", "header-only", "xlsx", "truncated-gz", "no-id-auto", "broken-ndjson", "wide"])
def test_a_bad_file_is_refused_and_leaves_nothing(served: tuple[SyncClient, str, Path],
                                                  name: str, content: bytes, auto: bool,
                                                  status: int) -> None:
    client, _, data_dir = served
    before = data_entries(data_dir)
    body = assert_error(upload(client, name, content, auto), status,
                         "too_large" if status == 413 else "bad_input")
    assert name.split(".")[0] in body["detail"] or status == 415
    assert data_entries(data_dir) == before


def test_requests_that_are_not_uploads(served: tuple[SyncClient, str, Path]) -> None:
    client, _, data_dir = served
    before = data_entries(data_dir)
    assert_error(client.post("/api/catalogues", content=b"id\n1\n",
                              headers={"content-type": "text/csv"}), 415, "bad_input")
    assert_error(client.post("/api/catalogues", files={"other": ("c.csv", b"id\n1\n")}), 400,
                  "bad_input")
    assert data_entries(data_dir) == before


def test_upload_over_the_limit_is_413_and_leaves_nothing(served: tuple[SyncClient, str, Path]
                                                        ) -> None:
    client, _, data_dir = served
    before = data_entries(data_dir)
    assert_error(upload(client, "big.csv", b"id\n" + b"x\n" * LIMIT), 413, "too_large")
    assert data_entries(data_dir) == before and list((data_dir / "tmp").iterdir()) == []


def test_a_file_that_breaks_during_ingest_fails_in_one_line(served: tuple[SyncClient, str, Path]
                                                           ) -> None:
    client, _, data_dir = served
    lines = ["id,mass [kg],radius [m]"] + [f"b{i},1e20,1e5" for i in range(1, 2000)]
    lines[1500] = 'b1500,"1e20,1e5'  # an unterminated quote far past the sniffed rows
    accepted = upload(client, "quote.csv", "\n".join(lines).encode()).json()
    done = wait_done(client, accepted["id"])
    assert done["status"] == "failed" and "\n" not in done["error"] and "quote" in done["error"]
    assert done["error"].startswith("quote.csv: ")
    assert [p.name for p in (data_dir / "incoming" / accepted["id"]).iterdir()] == [
        "manifest.json"]
    assert_error(client.get(f"/api/catalogues/{accepted['id']}/findings"), 409, "conflict")
    assert client.delete(f"/api/catalogues/{accepted['id']}").status_code == 204


# --- the mapping step ----------------------------------------------------------------------


def test_mapping_step(served: tuple[SyncClient, str, Path]) -> None:
    client, _, data_dir = served
    header = ["id", "name", "type", "parent", "mass", "radius", "a", "eccentricity", "period"]
    content = write_catalogue(data_dir.parent / "plain.csv", n_planets=20, header=header)
    accepted = upload(client, "plain.csv", content.read_bytes()).json()
    assert accepted["status"] == "mapping"
    waiting = client.get(f"/api/catalogues/{accepted['id']}").json()
    proposal = waiting["proposal"]
    assert proposal["columns"] == header and proposal["samples"]["type"][0] == "G2V"
    assert proposal["reasons"] and proposal["families"]["Icy moon"] == "ice"
    url = f"/api/catalogues/{accepted['id']}"
    assert_error(client.get(f"{url}/findings"), 409, "conflict")
    assert_error(client.post(f"{url}/mapping", json={"units": {"mass": "furlong"}}), 422,
                  "bad_input")
    assert_error(client.post(f"{url}/mapping", json={"map": {"id": "nope"}}), 422, "bad_input")
    assert_error(client.post(f"{url}/mapping", json={"families": {"G2V": "dragon"}}), 422,
                  "bad_input")
    choice = {"units": {"mass": "earth_mass", "radius": "km", "semi_major_axis": "au",
                        "period": "d"}, "families": {"Icy moon": "rock"}}
    started = client.post(f"{url}/mapping", json=choice)
    assert started.status_code == 202 and started.json()["status"] == "ingesting"
    done = wait_done(client, accepted["id"])
    assert done["status"] == "ready" and done["options"]["units"]["mass"] == "earth_mass"
    assert done["summary"]["by_family"]["rock"] > 30  # 20 planets + the moons, now rock
    body = client.get(f"{url}/bodies/moon-1").json()
    assert next(f for f in body["fields"] if f["field"] == "mass")["value"] == pytest.approx(
        1.7e-4 * M_EARTH)
    assert_error(client.post(f"{url}/mapping", json=choice), 409, "conflict")
    assert client.delete(url).status_code == 204


def test_mapping_step_builds_host_rows_and_reads_null_sentinels(
        served: tuple[SyncClient, str, Path]) -> None:
    # one row per planet with its star's columns, as exoplanet.eu and TEPCat publish them
    client, _, _ = served
    content = ("name,mass [M_jup],a [AU],star_name,star_mass,star_radius\n"
               "55 Cnc b,0.831,0.1134,55 Cnc,0.905,0.943\n"
               "55 Cnc e,-1,0.01544,55 Cnc,-1,0.96\n"
               "51 Peg b,0.46,0.052,51 Peg,1.11,1.266\n")
    accepted = upload(client, "planets.csv", content.encode()).json()
    assert accepted["status"] == "mapping"
    url = f"/api/catalogues/{accepted['id']}"
    assert_error(client.post(f"{url}/mapping", json={"map": {"id": "name"},
                                                     "hosts": {"name": "nope"}}), 422,
                 "bad_input")
    choice = {"map": {"id": "name", "name": "name"},
              "hosts": {"name": "star_name", "mass": "star_mass", "radius": "star_radius"},
              "host_units": {"mass": "solar_mass", "radius": "solar_radius"}, "nulls": ["-1"]}
    assert client.post(f"{url}/mapping", json=choice).status_code == 202
    done = wait_done(client, accepted["id"])
    assert done["status"] == "ready" and done["rows"] == 5  # three planets and two hosts
    assert done["options"]["hosts"]["name"] == "star_name" and done["options"]["nulls"] == ["-1"]
    host = client.get(f"{url}/bodies/55%20Cnc").json()
    mass = next(f for f in host["fields"] if f["field"] == "mass")["value"]
    assert mass == pytest.approx(0.905 * M_SUN)  # the first value given; -1 is no value
    assert client.delete(url).status_code == 204


# --- static files and the schema -----------------------------------------------------------


def test_plotly_and_openapi_are_served_locally(served: tuple[SyncClient, str, Path]) -> None:
    client, _, _ = served
    plotly = client.get("/static/vendor/plotly.min.js")
    assert plotly.status_code == 200 and len(plotly.content) > 1_000_000
    assert "javascript" in plotly.headers["content-type"]
    schema = client.get("/api/openapi.json").json()
    assert {"/api/catalogues", "/api/catalogues/{catalogue_id}/findings", "/api/views"} <= set(
        schema["paths"])
    assert "multipart/form-data" in schema["paths"]["/api/catalogues"]["post"]["requestBody"][
        "content"]
    assert {"FindingsPage", "BodyOut", "ErrorOut"} <= set(schema["components"]["schemas"])


