"""Triage through the real app (in process): decisions made as the screen makes them go to
SQLite, out to a decisions file, into another data directory, and carry over to the next upload
of the same catalogue; findings, exports and the report carry them; stale ones are reported."""

from __future__ import annotations

import csv
import io
from collections.abc import Iterator
from pathlib import Path

import polars as pl
import pytest
from web_support import SyncClient, api_settings, asgi_client, assert_error, upload, wait_done

from bodycensus.dashboard.app import create_app
from bodycensus.storage.decisions_file import loads

HEADER = "id,type,orbits,system,mass (earth_mass),radius_km,a (au),e\n"
SUN = "sol,yellow dwarf star,,Sol,332946,695700,,\n"
# Denser than pure iron (Seager et al. 2007): ~23,000 kg/m3 at 1 M_earth; impossible.
LEADS = "".join(f"lead{i},terrestrial planet,sol,Sol,1,4000,{i + 1},0.01\n" for i in range(3))
CATALOGUE = (HEADER + SUN + LEADS).encode()
WEEK_TWO = (HEADER + SUN + LEADS.replace("lead2,", "tin2,")).encode()  # one body renamed


def _ready(client: SyncClient, name: str, content: bytes) -> str:
    cat_id = upload(client, name, content, auto=True).json()["id"]
    assert wait_done(client, cat_id)["status"] == "ready"
    return cat_id


def _decide(client: SyncClient, cat_id: str, **body: object) -> dict:
    answer = client.post(f"/api/catalogues/{cat_id}/decisions", json=body)
    assert answer.status_code == 200, answer.text
    return answer.json()


@pytest.fixture()
def client(tmp_path: Path) -> Iterator[SyncClient]:
    with asgi_client(create_app(api_settings(tmp_path / "data"))) as running:
        yield running


def test_decisions_round_trip_through_the_file_into_another_data_directory(
        client: SyncClient, tmp_path: Path) -> None:
    cat_id = _ready(client, "universe.csv", CATALOGUE)
    assert _decide(client, cat_id, scope="finding", status="confirmed", by="Ana", note="typo",
                   items=[{"rule": "denser-than-iron", "target": "lead0"}])["key"] == "universe"
    _decide(client, cat_id, scope="label", status="accepted", by="Ben",
            items=[{"rule": "denser-than-iron", "target": "terrestrial planet"}])
    text = client.get(f"/api/catalogues/{cat_id}/decisions.toml").text
    assert loads(text).catalogue == "universe" and len(loads(text).decisions) == 2

    with asgi_client(create_app(api_settings(tmp_path / "elsewhere"))) as other:
        copy = _ready(other, "universe-copy.csv", CATALOGUE)
        imported = other.post(f"/api/catalogues/{copy}/decisions/import", json={"toml": text})
        assert imported.json() == {"key": "universe-copy", "decided": 2, "cleared": 0}
        assert other.get(f"/api/catalogues/{copy}/decisions.toml").text.replace(
            "universe-copy", "universe") == text
        found = other.get(f"/api/catalogues/{copy}/findings",
                          params={"rule": "denser-than-iron"}).json()["items"]
        assert {f["body"]: (f["decision"], f["decided_by"]) for f in found} == {
            "lead0": ("confirmed", "Ana"), "lead1": ("accepted", "Ben"),
            "lead2": ("accepted", "Ben")}


def test_decisions_carry_over_to_the_next_upload_and_stale_ones_are_reported(
        client: SyncClient) -> None:
    first = _ready(client, "universe.csv", CATALOGUE)
    _decide(client, first, scope="finding", status="wontfix",
            items=[{"rule": "denser-than-iron", "target": f"lead{i}"} for i in range(3)])
    second = _ready(client, "universe.csv", WEEK_TWO)
    listed = client.get(f"/api/catalogues/{second}/decisions").json()
    assert listed["key"] == "universe" and len(listed["decisions"]) == 3
    assert [d["target"] for d in listed["stale"]] == ["lead2"]  # renamed to tin2
    assert listed["counts"]["wontfix"] == 2 and listed["counts"]["undecided"] >= 1
    undecided = client.get(f"/api/catalogues/{second}/findings",
                           params={"rule": "denser-than-iron", "undecided": "1"}).json()
    assert [f["body"] for f in undecided["items"]] == ["tin2"]
    page = client.get(f"/catalogues/{second}/triage").text
    assert "Stale decisions" in page and "lead2" in page


def test_a_chosen_key_shares_decisions_between_differently_named_files(
        client: SyncClient) -> None:
    first, second = _ready(client, "week-48.csv", CATALOGUE), _ready(client, "week-49.csv",
                                                                        CATALOGUE)
    for cat_id in (first, second):
        assert client.post(f"/api/catalogues/{cat_id}/decisions/key",
                           json={"key": "generator runs"}).json() == {"key": "generator runs"}
    _decide(client, first, scope="label", status="accepted",
            items=[{"rule": "denser-than-iron", "target": "terrestrial planet"}])
    counts = client.get(f"/api/catalogues/{second}/decisions").json()["counts"]
    assert counts["accepted"] == 3


def test_every_finding_of_a_view_and_undeciding(client: SyncClient) -> None:
    cat_id = _ready(client, "universe.csv", CATALOGUE)
    done = _decide(client, cat_id, scope="finding", status="accepted", items=[],
                   query="rule=denser-than-iron")
    assert done["decided"] == 3
    cleared = _decide(client, cat_id, scope="finding", status=None,
                      items=[{"rule": "denser-than-iron", "target": "lead1"}])
    assert cleared["cleared"] == 1
    left = client.get(f"/api/catalogues/{cat_id}/findings",
                      params={"rule": "denser-than-iron", "undecided": "1"}).json()
    assert [f["body"] for f in left["items"]] == ["lead1"]


def test_exports_and_the_report_carry_the_decisions(client: SyncClient) -> None:
    cat_id = _ready(client, "universe.csv", CATALOGUE)
    _decide(client, cat_id, scope="system", status="confirmed", by="Cy", note="Sol is broken",
            items=[{"rule": "denser-than-iron", "target": "Sol"}])
    rows = list(csv.DictReader(io.StringIO(client.get(
        f"/api/catalogues/{cat_id}/findings.csv", params={"rule": "denser-than-iron"}).text)))
    assert {(r["decision"], r["decision_scope"], r["decided_by"]) for r in rows} == {
        ("confirmed", "system", "Cy")}
    parquet = pl.read_parquet(io.BytesIO(client.get(
        f"/api/catalogues/{cat_id}/findings.parquet", params={"undecided": "1"}).content))
    assert "decision" in parquet.columns and parquet["decision"].null_count() == parquet.height
    assert "denser-than-iron" not in parquet["rule"].to_list()
    report = client.get(f"/catalogues/{cat_id}/report.html").text
    assert "decision-confirmed" in report and "Sol is broken" in report


def test_the_screens_show_decisions_and_the_undecided_filter(client: SyncClient) -> None:
    cat_id = _ready(client, "universe.csv", CATALOGUE)
    _decide(client, cat_id, scope="label", status="accepted", by="Ana",
            items=[{"rule": "denser-than-iron", "target": "terrestrial planet"}])
    triage = client.get(f"/catalogues/{cat_id}/triage").text
    assert "decision-accepted" in triage and "by Ana" in triage
    assert "denser-than-iron" not in client.get(
        f"/catalogues/{cat_id}/triage", params={"undecided": "1"}).text
    findings = client.get(f"/catalogues/{cat_id}/findings", params={"undecided": "1"}).text
    assert "lead0" not in findings
    assert "decision-accepted" in client.get(f"/catalogues/{cat_id}/bodies/lead0").text
    assert 'id="triage-summary"' in client.get(f"/catalogues/{cat_id}").text
    by_system = client.get(f"/catalogues/{cat_id}/triage", params={"by": "system"}).text
    assert ">Sol</a>" in by_system
    _decide(client, cat_id, scope="system", status="wontfix", by="Cy",
            items=[{"rule": "denser-than-iron", "target": "Sol"}])
    system = client.get(f"/catalogues/{cat_id}/systems/Sol").text
    assert 'id="system-groups"' in system and "decision-wontfix" in system and "by Cy" in system


@pytest.mark.parametrize(("body", "status"), [
    ({"scope": "label", "status": "maybe", "items": [{"rule": "r", "target": "t"}]}, 422),
    ({"scope": "label", "status": "accepted", "items": []}, 400),
    ({"scope": "label", "status": "accepted", "items": [], "query": "rule=x"}, 400),
    ({"scope": "label", "status": "accepted", "items": [{"rule": " ", "target": "t"}]}, 400),
])
def test_bad_decisions_are_refused_in_one_line(client: SyncClient, body: dict,
                                               status: int) -> None:
    cat_id = _ready(client, "universe.csv", CATALOGUE)
    answer = client.post(f"/api/catalogues/{cat_id}/decisions", json=body)
    assert_error(answer, status, "bad_input")


def test_a_bad_decisions_file_is_refused_and_nothing_is_lost(client: SyncClient) -> None:
    cat_id = _ready(client, "universe.csv", CATALOGUE)
    _decide(client, cat_id, scope="label", status="accepted",
            items=[{"rule": "denser-than-iron", "target": "terrestrial planet"}])
    bad = client.post(f"/api/catalogues/{cat_id}/decisions/import",
                      json={"toml": "format = 1\n[[label]]\nrule = 'r'\n", "replace": True})
    assert "[[label]] number 1" in assert_error(bad, 400, "bad_input")["detail"]
    assert len(client.get(f"/api/catalogues/{cat_id}/decisions").json()["decisions"]) == 1


def test_compare_screen_and_its_json_twin(client: SyncClient) -> None:
    old, new = _ready(client, "universe.csv", CATALOGUE), _ready(client, "universe.csv",
                                                                    WEEK_TWO)
    result = client.get("/api/compare", params={"old": old, "new": new}).json()
    assert result["bodies"]["examples"] == {"added": ["tin2"], "removed": ["lead2"],
                                            "changed": []}
    page = client.get("/compare", params={"old": old, "new": new}).text
    assert 'id="compare-bodies"' in page and 'id="figure-data"' in page
    assert client.get("/compare").status_code == 200
    assert_error(client.get("/api/compare", params={"old": old, "new": old}), 400,
                 "bad_input")
    assert client.get("/api/compare", params={"old": old, "new": "nosuchcat"}).status_code == 404


def test_lists_of_systems_and_marked_points_carry_decision_badges(client: SyncClient) -> None:
    cat_id = _ready(client, "universe.csv", CATALOGUE)
    systems = client.get(f"/catalogues/{cat_id}/systems").text
    assert "3 undecided" in systems and "decision-confirmed" not in systems
    _decide(client, cat_id, scope="finding", status="confirmed", by="Ana",
            items=[{"rule": "denser-than-iron", "target": "lead0"}])
    systems = client.get(f"/catalogues/{cat_id}/systems").text
    assert "2 undecided" in systems and "decision-confirmed" in systems
    drawn = client.get(f"/catalogues/{cat_id}/diagrams", params={"diagram": "mass-radius"}).text
    table = drawn.split('id="drawn-table"')[1]
    lead0 = table.split(">lead0</a>")[1].split("</tr>")[0]
    lead1 = table.split(">lead1</a>")[1].split("</tr>")[0]
    assert "decision-confirmed" in lead0 and "undecided" not in lead0
    assert "1 undecided" in lead1 and "decision-" not in lead1
