"""The data directory: manifests written atomically, status moves, crash recovery, saved views."""

from __future__ import annotations

import json
import sqlite3
import threading
from pathlib import Path

import pytest

from bodycensus.errors import Conflict, NotFound
from bodycensus.storage.store import (
    KILLED,
    MANIFEST,
    Manifest,
    Store,
    json_ready,
    now,
    write_json_atomic,
)


def _upload(store: Store, text: str = "id\nA\n", status: str = "mapping") -> Manifest:
    """An upload as the API leaves it: source written, first manifest in place."""
    cat_id, path = store.new_upload(".csv")
    path.write_text(text)
    return store.open_upload(Manifest(id=cat_id, name="t.csv", status=status, created=now()))


def _publish(store: Store, manifest: Manifest) -> Manifest:
    """Pretend a run finished: claim, write a work file, publish."""
    store.claim(manifest.id, "mapping", status="ingesting")
    work = store.workdir(manifest.id)
    (work / "findings.parquet").write_bytes(b"PAR1")
    return store.publish(manifest.id, rows=1, summary={"rows": 1})


def test_publish_moves_the_finished_folder_and_drops_the_upload(tmp_path: Path) -> None:
    store = Store(tmp_path)
    ready = _publish(store, _upload(store))
    folder = tmp_path / "catalogues" / ready.id
    assert ready.status == "ready" and ready.progress == {"stage": "done", "fraction": 1.0}
    # the uploaded file stays beside the results, for re-runs without a new upload
    assert sorted(p.name for p in folder.iterdir()) == ["findings.parquet", MANIFEST,
                                                        "source.csv"]
    assert list((tmp_path / "incoming").iterdir()) == []
    assert store.get(ready.id) == ready and store.ready_dir(ready.id) == folder
    assert [m.id for m in store.list()] == [ready.id]


def test_a_manifest_changed_by_another_store_is_read_at_once(tmp_path: Path) -> None:
    """Manifests are parsed once per version of their file; a rename or a re-run's publish by
    another store (another server worker) on the same data directory shows at once, even when
    the new manifest has the same size as the old."""
    reader, writer = Store(tmp_path), Store(tmp_path)
    ready = _publish(writer, _upload(writer))
    assert reader.get(ready.id).name == "t.csv" and reader.get(ready.id) is reader.get(ready.id)
    writer.rename(ready.id, "u.csv")  # same length: only the inode and the time differ
    assert reader.get(ready.id).name == "u.csv"
    writer.begin_rerun(ready.id, None)  # the re-run's manifest in incoming/ shadows the ready one
    assert reader.get(ready.id).status == "mapping" and reader.get(ready.id).run == 2
    writer.discard_rerun(ready.id)
    assert reader.get(ready.id).status == "ready" and reader.get(ready.id).run == 1


def test_a_catalogue_that_is_not_ready_is_a_conflict(tmp_path: Path) -> None:
    store = Store(tmp_path)
    manifest = _upload(store)
    with pytest.raises(Conflict, match="not ready"):
        store.ready_dir(manifest.id)
    store.claim(manifest.id, "mapping", status="ingesting")
    with pytest.raises(Conflict):  # a second mapping confirmation must not start a second run
        store.claim(manifest.id, "mapping", status="ingesting")
    with pytest.raises(Conflict, match="being ingested"):
        store.delete(manifest.id)


@pytest.mark.parametrize("bad_id", ["../catalogues", "a/b", "", "x" * 200, "..", "nope1234"])
def test_unknown_or_hostile_ids_are_not_found(tmp_path: Path, bad_id: str) -> None:
    with pytest.raises(NotFound):
        Store(tmp_path).get(bad_id)


def test_fail_keeps_only_the_manifest(tmp_path: Path) -> None:
    store = Store(tmp_path)
    manifest = _upload(store)
    store.claim(manifest.id, "mapping", status="ingesting")
    (store.workdir(manifest.id) / "bodies.parquet").write_bytes(b"half")
    failed = store.fail(manifest.id, "line 3: broken")
    assert (failed.status, failed.error) == ("failed", "line 3: broken")
    assert [p.name for p in (tmp_path / "incoming" / manifest.id).iterdir()] == [MANIFEST]


def test_recovery_after_a_crash(tmp_path: Path) -> None:
    store = Store(tmp_path)
    cut_ingest = _upload(store)
    store.claim(cut_ingest.id, "mapping", status="ingesting")
    store.workdir(cut_ingest.id)
    waiting = _upload(store)  # waiting for its mapping: must survive untouched
    half_upload, _ = store.new_upload(".csv")  # no manifest yet: the upload was cut off
    (tmp_path / "tmp" / "export.csv").write_text("x")
    published = _publish(store, _upload(store))
    (tmp_path / "incoming" / published.id).mkdir()  # a publish cut off after its rename
    (tmp_path / "incoming" / published.id / MANIFEST).write_text("{}")

    again = Store(tmp_path)
    failed = again.get(cut_ingest.id)
    assert (failed.status, failed.error) == ("failed", KILLED)
    assert [p.name for p in (tmp_path / "incoming" / cut_ingest.id).iterdir()] == [MANIFEST]
    assert again.get(waiting.id).status == "mapping" and again.source_path(waiting.id).is_file()
    assert not (tmp_path / "incoming" / half_upload).exists()
    assert not (tmp_path / "incoming" / published.id).exists()
    assert again.get(published.id).status == "ready"
    assert list((tmp_path / "tmp").iterdir()) == []


def test_manifest_reads_never_see_a_half_written_file(tmp_path: Path) -> None:
    store = Store(tmp_path)
    manifest = _upload(store)
    errors: list[BaseException] = []
    stop = threading.Event()

    def read() -> None:
        while not stop.is_set():
            try:
                store.get(manifest.id)
            except BaseException as err:  # noqa: BLE001 - any failure is the finding
                errors.append(err)

    reader = threading.Thread(target=read)
    reader.start()
    for i in range(200):
        store.set_progress(manifest.id, "read", i / 200)
    stop.set()
    reader.join()
    assert errors == []
    assert store.get(manifest.id).progress == {"stage": "read", "fraction": 0.995}
    assert not [p for p in (tmp_path / "incoming" / manifest.id).iterdir() if ".tmp" in p.name]


def test_write_json_atomic_writes_plain_json(tmp_path: Path) -> None:
    import numpy as np

    path = tmp_path / "a.json"
    write_json_atomic(path, {"x": float("nan"), "y": np.int64(3), "z": (1, float("inf"))})
    assert json.loads(path.read_text()) == {"x": None, "y": 3, "z": [1, None]}
    assert json_ready({"p": tmp_path}) == {"p": str(tmp_path)}
    assert [p.name for p in tmp_path.iterdir()] == ["a.json"]


def test_saved_views_persist_in_sqlite_wal(tmp_path: Path) -> None:
    store = Store(tmp_path)
    ready = _publish(store, _upload(store))
    first = store.save_view(ready.id, "severity=error", "Broken rows", "look at these")
    second = store.save_view(ready.id, "", "Everything", "")
    assert first.url == f"/v/{first.slug}" and len(first.slug) == 8 and first.slug != second.slug
    again = Store(tmp_path)
    assert again.get_view(first.slug) == first
    assert {v.slug for v in again.list_views(ready.id)} == {first.slug, second.slug}
    with sqlite3.connect(tmp_path / "bodycensus.sqlite") as conn:
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    with pytest.raises(NotFound):
        again.save_view("nope1234", "", "t", "")
    with pytest.raises(NotFound):
        again.get_view("missing")


def test_delete_removes_catalogue_and_its_views(tmp_path: Path) -> None:
    store = Store(tmp_path)
    ready, other = _publish(store, _upload(store)), _publish(store, _upload(store))
    store.save_view(ready.id, "", "t", "")
    kept = store.save_view(other.id, "", "t", "")
    store.delete(ready.id)
    with pytest.raises(NotFound):
        store.get(ready.id)
    assert store.list_views(ready.id) == [] and store.get_view(kept.slug) == kept
    assert [m.id for m in store.list()] == [other.id]
    assert list((tmp_path / "tmp").iterdir()) == []


def test_default_data_dir_is_never_the_working_directory(monkeypatch, tmp_path) -> None:
    from bodycensus.dashboard.settings import Settings, default_data_dir

    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("BODYCENSUS_DATA", raising=False)
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "xdg"))
    assert default_data_dir() == tmp_path / "xdg" / "bodycensus"
    monkeypatch.setenv("BODYCENSUS_DATA", str(tmp_path / "here"))
    assert Settings.from_cli(data_dir=None).data_dir == tmp_path / "here"
