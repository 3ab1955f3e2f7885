"""Mapping presets (storage/presets.py): saved per header in the data directory's SQLite, found
again only for exactly the same columns in the same order."""

from __future__ import annotations

from pathlib import Path

from bodycensus.storage.presets import Presets, header_key
from bodycensus.storage.store import Store

CHOICES = {"map": {"id": "key", "mass": "m"}, "units": {"mass": "earth_mass"},
           "families": {"moon": "ice"}}


def test_a_preset_is_found_for_the_same_header_only(tmp_path: Path) -> None:
    presets = Presets(Store(tmp_path).db_path)
    presets.save(["key", "m", "kind"], CHOICES, "first.csv")
    found = presets.find(["key", "m", "kind"])
    assert found is not None and found.choices == CHOICES and found.source == "first.csv"
    assert presets.find(["key", "kind", "m"]) is None  # another order is another header
    assert presets.find(["key", "m"]) is None
    assert header_key(["a,b"]) != header_key(["a", "b"])  # names are kept apart


def test_saving_again_replaces_and_it_survives_a_restart(tmp_path: Path) -> None:
    store = Store(tmp_path)
    Presets(store.db_path).save(["a", "b"], CHOICES, "one.csv")
    Presets(store.db_path).save(["a", "b"], {**CHOICES, "units": {}}, "two.csv")
    again = Presets(Store(tmp_path).db_path).find(["a", "b"])
    assert again is not None and again.source == "two.csv" and again.choices["units"] == {}
    Presets(store.db_path).forget(["a", "b"])
    assert Presets(store.db_path).find(["a", "b"]) is None
