"""Triage decisions in SQLite (storage/decisions.py): stored per catalogue key, replaced by a
later decision of the same finding or group, undone, and found again by the next upload of the
same catalogue."""

from __future__ import annotations

from pathlib import Path

import pytest

from bodycensus.errors import BadInput
from bodycensus.storage.decisions import Decision, default_key
from bodycensus.storage.store import Store

ICE = Decision("label", "inside-fluid-roche", "icy moon", "accepted", "rigid moons", "Ana",
               "2026-12-02T10:00:00+00:00")
ONE = Decision("finding", "denser-than-iron", "B0000042", "confirmed", "", "Ben", "")


def test_decisions_survive_a_restart_of_the_store(tmp_path: Path) -> None:
    Store(tmp_path).decisions.decide("universe", [ICE, ONE])
    again = Store(tmp_path).decisions
    assert again.of("universe") == [ONE, ICE]  # stable order: scope, rule, target
    assert again.of("another") == []


def test_a_later_decision_of_the_same_group_replaces_the_earlier(tmp_path: Path) -> None:
    book = Store(tmp_path).decisions
    book.decide("universe", [ICE])
    book.decide("universe", [Decision("label", ICE.rule, ICE.target, "wontfix", by="Cy")])
    assert [(d.status, d.by) for d in book.of("universe")] == [("wontfix", "Cy")]
    assert book.undo("universe", [ICE.key]) == 1
    assert book.of("universe") == []


def test_replace_all_is_the_whole_set(tmp_path: Path) -> None:
    book = Store(tmp_path).decisions
    book.decide("universe", [ICE, ONE])
    book.replace_all("universe", [ONE])
    assert book.of("universe") == [ONE]


def test_the_key_is_the_file_name_without_its_suffixes_unless_chosen(tmp_path: Path) -> None:
    assert default_key("universe.csv.gz") == "universe"
    assert default_key("sector 7.parquet") == "sector 7"
    assert default_key("notes") == "notes"
    book = Store(tmp_path).decisions
    assert book.key_of("cat1", "week-49.csv") == "week-49"
    book.set_key("cat1", "  weekly universe ")
    assert book.key_of("cat1", "week-49.csv") == "weekly universe"
    book.forget_catalogue("cat1")
    assert book.key_of("cat1", "week-49.csv") == "week-49"


def test_deleting_a_catalogue_keeps_its_key_s_decisions(tmp_path: Path) -> None:
    store = Store(tmp_path)
    store.decisions.decide("universe", [ICE])
    store.decisions.set_key("gone", "universe")
    store.decisions.forget_catalogue("gone")
    assert store.decisions.of("universe") == [ICE]


@pytest.mark.parametrize(("changes", "word"), [
    ({"status": "fine"}, "status"), ({"scope": "galaxy"}, "scope"), ({"rule": " "}, "rule"),
    ({"target": ""}, "target"), ({"note": "x" * 3000}, "note")])
def test_a_bad_decision_is_refused_in_one_line(changes: dict[str, str], word: str) -> None:
    fields = {"scope": "label", "rule": "r", "target": "t", "status": "accepted", **changes}
    with pytest.raises(BadInput, match=word) as caught:
        Decision(**fields)  # type: ignore[arg-type]
    assert "\n" not in str(caught.value)


def test_a_decision_saved_elsewhere_is_read_at_once(tmp_path: Path) -> None:
    """Reads are answered from memory while SQLite's data version stands still: a decision
    saved by another process on the same data directory (a second server worker) or by another
    store is read by the next request, with no wait."""
    import subprocess
    import sys

    reader = Store(tmp_path).decisions
    assert reader.of("universe") == [] and reader.of("universe") == []
    script = ("import sys; from pathlib import Path; from bodycensus.storage.store import Store;"
              "from bodycensus.storage.decisions import Decision;"
              "Store(Path(sys.argv[1])).decisions.decide('universe', [Decision('finding',"
              " 'denser-than-iron', 'B0000042', 'confirmed', '', 'Ben', '')])")
    subprocess.run([sys.executable, "-c", script, str(tmp_path)], check=True)
    assert reader.of("universe") == [ONE]
    Store(tmp_path).decisions.decide("universe", [ICE])
    assert reader.of("universe") == [ONE, ICE]
    assert reader.key_of("cat1", "universe.csv") == "universe"
    Store(tmp_path).decisions.set_key("cat1", "galaxy")
    assert reader.key_of("cat1", "universe.csv") == "galaxy"
    reader.undo("universe", [ONE.key])
    assert reader.of("universe") == [ICE]
