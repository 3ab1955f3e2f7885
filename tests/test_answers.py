"""Answers kept (dashboard/answers.py) through the real app: a ready catalogue's reads are
sent again while nothing they show has changed, and rendered afresh at once after a decision
is saved, the catalogue renamed or a view saved; pages that read a cookie, errors and other
catalogues' answers are never sent from memory."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from web_support import SyncClient, api_settings, asgi_client, upload, wait_done

from bodycensus.dashboard.answers import STATUS_HEADER, Answer, AnswerBook
from bodycensus.dashboard.app import create_app

HEADER = "id,type,orbits,system,mass (earth_mass),radius_km,a (au),e\n"
SUN = "sol,yellow dwarf star,,Sol,332946,695700,,\n"
# Denser than pure iron (Seager et al. 2007): ~23,000 kg/m3 at 1 M_earth; impossible.
LEADS = "".join(f"lead{i},terrestrial planet,sol,Sol,1,4000,{i + 1},0.01\n" for i in range(3))
CATALOGUE = (HEADER + SUN + LEADS).encode()
SEEN = STATUS_HEADER.decode()


@pytest.fixture()
def ready(tmp_path: Path) -> Iterator[tuple[SyncClient, str]]:
    with asgi_client(create_app(api_settings(tmp_path / "data"))) as client:
        cat_id = upload(client, "universe.csv", CATALOGUE, auto=True).json()["id"]
        assert wait_done(client, cat_id)["status"] == "ready"
        yield client, cat_id


def _get(client: SyncClient, path: str, **query: str) -> tuple[str, str]:
    answer = client.get(path, params=query)
    assert answer.status_code == 200, answer.text
    return answer.headers.get(SEEN, ""), answer.text


def test_reads_are_kept_until_a_decision_is_saved(ready: tuple[SyncClient, str]) -> None:
    client, cat_id = ready
    api = f"/api/catalogues/{cat_id}"
    for path in (f"{api}/overview", f"{api}/findings", f"{api}/bodies/lead0",
                 f"/catalogues/{cat_id}/diagrams"):
        first, again = _get(client, path), _get(client, path)
        assert (first[0], again[0]) == ("rendered", "kept") and again[1] == first[1], path
    assert _get(client, f"{api}/findings", severity="impossible")[0] == "rendered"  # query
    page = f"/catalogues/{cat_id}/diagrams"
    assert 'decision-confirmed' not in _get(client, page, diagram="mass-radius")[1]
    decided = client.post(f"{api}/decisions", json={
        "scope": "finding", "status": "confirmed", "by": "Ana",
        "items": [{"rule": "denser-than-iron", "target": "lead0"}]})
    assert decided.status_code == 200, decided.text
    seen, body = _get(client, f"{api}/bodies/lead0")
    assert seen == "rendered" and '"confirmed"' in body
    seen, page_text = _get(client, page, diagram="mass-radius")
    assert seen == "rendered" and "decision-confirmed" in page_text


def test_a_rename_or_a_saved_view_renders_again(ready: tuple[SyncClient, str]) -> None:
    client, cat_id = ready
    page = f"/catalogues/{cat_id}/diagrams"
    assert "universe.csv" in _get(client, page)[1] and _get(client, page)[0] == "kept"
    renamed = client.patch(f"/api/catalogues/{cat_id}", json={"name": "galaxy.csv"})
    assert renamed.status_code == 200, renamed.text
    seen, text = _get(client, page)
    assert seen == "rendered" and "galaxy.csv" in text and "universe.csv" not in text
    assert _get(client, page)[0] == "kept"
    saved = client.post("/api/views", json={"catalogue": cat_id, "query": "?diagram=roche",
                                            "title": "Roche", "note": ""})
    assert saved.status_code in (200, 201), saved.text
    assert _get(client, page)[0] == "rendered"


def test_cookie_pages_and_errors_are_never_kept(ready: tuple[SyncClient, str]) -> None:
    client, cat_id = ready
    for path in (f"/catalogues/{cat_id}/findings", f"/catalogues/{cat_id}/bodies/lead0",
                 f"/catalogues/{cat_id}", "/api/catalogues"):
        assert _get(client, path)[0] == "" and _get(client, path)[0] == "", path
    for _ in range(2):
        missing = client.get(f"/api/catalogues/{cat_id}/bodies/nosuchbody")
        assert missing.status_code == 404 and missing.headers[SEEN] == "rendered"
    assert client.get("/api/catalogues/nosuchcat/overview").headers.get(SEEN) is None


def test_the_book_drops_the_least_recently_sent_past_its_budget() -> None:
    book = AnswerBook(max_bytes=10)
    for key in "abc":
        book.put(key, Answer(200, [], b"1234"))
    assert book.get("a") is None and book.get("b") is not None and book.size == 8
    book.put("d", Answer(200, [], b"1234"))  # b was sent last, so c goes
    assert book.get("c") is None and book.get("b") is not None and book.get("d") is not None
