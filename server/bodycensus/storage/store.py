"""The data directory: catalogues (Parquet + manifest.json) and SQLite for saved views.

Layout under ``data_dir``::

    incoming/<id>/source<suffix>   an upload being mapped or ingested, with its manifest.json
    incoming/<id>/work/            the engine's output while it is written
    catalogues/<id>/               a finished catalogue: manifest.json, Parquet, aggregates.json
                                   and the uploaded file (source<suffix>, kept for re-runs)
    tmp/                           exports and deletions in progress (emptied at start-up)
    bodycensus.sqlite              saved views, triage decisions (storage/decisions.py) and
                                   mapping presets (storage/presets.py) (WAL)

A catalogue appears under ``catalogues/`` only by renaming a complete work folder; every JSON
file is written to a temporary name, fsynced and renamed, so a killed server leaves either the
old or the new file, never half of one. A re-run opens ``incoming/<id>/`` again beside the
ready catalogue (its manifest, one ``run`` number higher, is the one shown) with a hard link to
the kept file; its publish swaps the folders, and until then the previous results stay on disk
(``discard_rerun`` brings them back).
"""

from __future__ import annotations

import builtins
import itertools
import json
import math
import os
import re
import secrets
import shutil
import sqlite3
import threading
from collections.abc import Iterator
from contextlib import closing, contextmanager, suppress
from dataclasses import dataclass, replace
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, Unpack

from bodycensus.durable import fsync_path
from bodycensus.errors import Conflict, NotFound, NotReady, StorageError, storage_error
from bodycensus.input.ingest import IngestRecord
from bodycensus.input.sniff import ProposalRecord
from bodycensus.storage.decisions import DecisionBook
from bodycensus.storage.manifest import Manifest, ManifestChanges, RunSummary, Status

MANIFEST = "manifest.json"
_ID = re.compile(r"^[A-Za-z0-9_-]{4,40}$")
MANIFESTS_KEPT = 256  # manifests kept parsed (see Store._read_manifest)
KILLED = "the server stopped during the ingest; upload the file again"


def new_slug(nbytes: int = 6) -> str:
    """A short random URL-safe slug (8 characters for 6 bytes)."""
    return secrets.token_urlsafe(nbytes)


def now() -> str:
    """The current UTC time as an ISO 8601 string (seconds)."""
    return datetime.now(UTC).isoformat(timespec="seconds")


def json_ready(value: Any) -> Any:
    """``value`` with non-finite floats as None and numpy scalars, tuples, sets and paths plain."""
    if isinstance(value, dict):
        return {str(k): json_ready(v) for k, v in value.items()}
    if isinstance(value, list | tuple | set | frozenset):
        return [json_ready(v) for v in value]
    if hasattr(value, "item") and callable(value.item):  # numpy scalar
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, Path):
        return str(value)
    return value


def write_json_atomic(path: Path, data: Any) -> None:
    """Write ``data`` as JSON to ``path``: temporary file, fsync, rename."""
    text = json.dumps(json_ready(data), ensure_ascii=False, allow_nan=False, indent=1)
    tmp = path.with_name(f".{path.name}.{secrets.token_hex(4)}.tmp")
    try:
        with open(tmp, "w", encoding="utf-8") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    finally:
        tmp.unlink(missing_ok=True)
    fsync_path(path.parent)


@dataclass(frozen=True)
class SavedView:
    """A saved view: a catalogue, its URL query, a title and a note, under a short slug."""

    slug: str
    catalogue: str
    query: str
    title: str
    note: str
    created: str

    @property
    def url(self) -> str:
        """Where the view is shown."""
        return f"/v/{self.slug}"


def _link_or_copy(source: str, dest: str) -> None:
    """Hard-link a file (no second copy of a big run); copy it across file systems."""
    try:
        os.link(source, dest)
    except OSError:
        shutil.copy2(source, dest)


class Store:
    """Catalogues on disk and saved views in SQLite; safe to share between threads."""

    def __init__(self, data_dir: Path) -> None:
        self.data_dir = Path(data_dir)
        self.catalogues = self.data_dir / "catalogues"
        self.incoming = self.data_dir / "incoming"
        self.tmp = self.data_dir / "tmp"
        for folder in (self.catalogues, self.incoming, self.tmp):
            folder.mkdir(parents=True, exist_ok=True)
        self.db_path = self.data_dir / "bodycensus.sqlite"
        self._lock = threading.RLock()
        self._unsaved: dict[str, Manifest] = {}  # failures the disk would not take
        self._manifests: dict[Path, tuple[tuple[int, int, int], Manifest]] = {}
        self._writes, self._generation = itertools.count(1), 0  # commits made here
        self._init_db()
        self.decisions = DecisionBook(self._db, self.db_path, lambda: self._generation)
        self.recover()

    # --- catalogues ------------------------------------------------------------------------
    def new_upload(self, suffix: str) -> tuple[str, Path]:
        """Reserve an id and return it with the path the upload streams to."""
        cat_id = new_slug()
        folder = self.incoming / cat_id
        try:
            folder.mkdir()
        except OSError as err:
            raise (storage_error(err) or err) from err
        return cat_id, folder / f"source{suffix}"

    def source_path(self, cat_id: str) -> Path:
        """The uploaded file of a catalogue that is still being mapped or ingested."""
        manifest = self.get(cat_id)
        return self.incoming / cat_id / f"source{manifest.source}"

    def kept_source(self, cat_id: str) -> Path | None:
        """The uploaded file a ready catalogue keeps for re-runs (None for one checked before
        files were kept)."""
        manifest = self.get(cat_id)
        path = self.catalogues / cat_id / f"source{manifest.source}"
        return path if path.is_file() else None

    def open_upload(self, manifest: Manifest) -> Manifest:
        """Write the first manifest of a finished upload."""
        self._write_manifest(self.incoming / manifest.id / MANIFEST, manifest)
        return manifest

    def discard(self, cat_id: str) -> None:
        """Remove an upload that was refused; nothing of it stays."""
        if _ID.match(cat_id):
            self._remove(self.incoming / cat_id)

    def get(self, cat_id: str) -> Manifest:
        """The manifest of a catalogue; NotFound if there is none."""
        if cat_id in self._unsaved:
            return self._unsaved[cat_id]
        path = self._manifest_path(cat_id)
        if path is None:
            raise NotFound(f"no catalogue '{cat_id}'; GET /api/catalogues lists them")
        return self._read_manifest(path)[1]

    def ready_version(self, cat_id: str) -> tuple[str, int, int, int] | None:
        """What names this version of a ready catalogue's results (its id and its manifest
        file's version, see ``_read_manifest``), or None when it is not ready: its files do
        not change until the manifest does (a re-run publishes a new folder and manifest)."""
        path = self._manifest_path(cat_id)
        if cat_id in self._unsaved or path is None or path.parent.parent != self.catalogues:
            return None
        try:
            version, manifest = self._read_manifest(path)
        except (OSError, ValueError):
            return None
        return (cat_id, *version) if manifest.status == "ready" else None

    def _read_manifest(self, path: Path) -> tuple[tuple[int, int, int], Manifest]:
        """The manifest in ``path`` and its version, parsed once per version of the file: every
        screen asks for its catalogue's manifest several times a request (~6% of a loaded
        server's time with the decisions). A manifest is only ever replaced whole (written to a
        temporary name and renamed), so its inode, modification time and size name the
        version."""
        seen = path.stat()
        version = (seen.st_ino, seen.st_mtime_ns, seen.st_size)
        with self._lock:
            kept = self._manifests.get(path)
        if kept is not None and kept[0] == version:
            return kept
        manifest = Manifest.from_json(json.loads(path.read_text(encoding="utf-8")))
        with self._lock:
            self._manifests[path] = (version, manifest)
            while len(self._manifests) > MANIFESTS_KEPT:
                self._manifests.pop(next(iter(self._manifests)))
        return version, manifest

    def list(self) -> list[Manifest]:
        """Every catalogue, newest first (a catalogue being re-run once, as its re-run)."""
        found: dict[str, Manifest] = {}
        for root in (self.catalogues, self.incoming):
            for folder in root.iterdir():
                try:
                    found[folder.name] = self.get(folder.name)
                except (NotFound, ValueError, OSError):
                    continue  # an upload still streaming, or a folder that is not ours
        return sorted(found.values(), key=lambda m: (m.created, m.id), reverse=True)

    def update(self, cat_id: str, **changes: Unpack[ManifestChanges]) -> Manifest:
        """Change fields of a manifest that is still in ``incoming/`` and write it atomically."""
        with self._lock:
            manifest = replace(self.get(cat_id), **changes)
            self._write_manifest(self.incoming / cat_id / MANIFEST, manifest)
            return manifest

    def claim(self, cat_id: str, expected: Status, **changes: Unpack[ManifestChanges]
              ) -> Manifest:
        """Like ``update``, but only from status ``expected`` (Conflict otherwise), atomically."""
        with self._lock:
            manifest = self.get(cat_id)
            if manifest.status != expected:
                raise Conflict(f"catalogue '{cat_id}' is {manifest.status}, not {expected}")
            return self.update(cat_id, **changes)

    def scratch(self, suffix: str) -> Path:
        """A fresh path under tmp/ for a file served once (an export), removed at start-up."""
        return self.tmp / f"{new_slug()}{suffix}"

    def set_progress(self, cat_id: str, stage: str, fraction: float) -> None:
        """Record how far the ingest is (``fraction`` of the whole run, 0..1)."""
        self.update(cat_id, progress={"stage": stage, "fraction": round(float(fraction), 4)})

    def workdir(self, cat_id: str) -> Path:
        """A fresh, empty folder for the engine's output."""
        work = self.incoming / cat_id / "work"
        self._remove(work)
        work.mkdir(parents=True)
        return work

    def publish(self, cat_id: str, rows: int, summary: RunSummary,
                mapping: IngestRecord | None = None) -> Manifest:
        """Mark the catalogue ready and rename its work folder, with the uploaded file kept for
        re-runs, into ``catalogues/`` (in place of the previous run's folder, if any)."""
        with self._lock:
            manifest = replace(self.get(cat_id), status="ready", error=None, proposal=None,
                               progress={"stage": "done", "fraction": 1.0}, rows=rows,
                               summary=summary, mapping=mapping)
            work = self.incoming / cat_id / "work"
            source = self.incoming / cat_id / f"source{manifest.source}"
            if source.is_file():
                os.replace(source, work / source.name)
            write_json_atomic(work / MANIFEST, manifest.to_json())
            previous = self.catalogues / cat_id
            if previous.exists():  # a re-run: the old results go only once the new are in
                doomed = self.tmp / f"{cat_id}.{secrets.token_hex(4)}.previous"
                os.replace(previous, doomed)
                os.replace(work, previous)
                shutil.rmtree(doomed, ignore_errors=True)
            else:
                os.replace(work, previous)
            fsync_path(self.catalogues)
            self._remove(self.incoming / cat_id)
            return manifest

    def add_run(self, folder: Path) -> Manifest:
        """Show a run folder written elsewhere (``bodycensus check --out DIR``, e.g. by a Dask
        cluster) as a ready catalogue: its files are hard-linked (copied across file systems)
        into a new ``catalogues/<id>/``, so the folder itself is never changed or deleted here.
        Adding the same folder again shows the catalogue it became (the manifest's id)."""
        folder = Path(folder)
        if not (folder / MANIFEST).is_file() or not (folder / "findings.parquet").is_file():
            raise NotFound(f"{folder}: not a run folder (no manifest.json and findings.parquet); "
                           "write one with bodycensus check DATASET --out DIR")
        manifest = Manifest.from_json(json.loads((folder / MANIFEST).read_text(encoding="utf-8")))
        if not _ID.match(manifest.id) or manifest.status != "ready":
            raise Conflict(f"{folder}: its manifest is not a ready run; check the dataset again")
        target = self.catalogues / manifest.id
        if (target / MANIFEST).is_file():
            return self.get(manifest.id)
        staging = self.tmp / f"{manifest.id}.{secrets.token_hex(4)}.adding"
        try:
            shutil.copytree(folder, staging, copy_function=_link_or_copy)
            fsync_path(staging)
            os.replace(staging, target)
            fsync_path(self.catalogues)
        except OSError as err:
            shutil.rmtree(staging, ignore_errors=True)
            raise (storage_error(err) or err) from err
        return self.get(manifest.id)

    def rename(self, cat_id: str, name: str) -> Manifest:
        """Give a catalogue another name (any status but ingesting)."""
        with self._lock:
            manifest = self.get(cat_id)
            if manifest.status == "ingesting":
                raise Conflict(f"catalogue '{cat_id}' is being checked; rename it when it ends")
            renamed = replace(manifest, name=name)
            path = self._manifest_path(cat_id)
            assert path is not None
            self._write_manifest(path, renamed)
            return renamed

    def begin_rerun(self, cat_id: str, proposal: ProposalRecord | None) -> Manifest:
        """Open a ready catalogue's mapping step again on its kept file, without a new upload:
        ``incoming/<id>/`` with a hard link to the file (a copy where links are refused) and a
        manifest one run higher; the previous results stay until the new run is published."""
        with self._lock:
            manifest = self.get(cat_id)
            kept = self.kept_source(cat_id) if manifest.status == "ready" else None
            if kept is None:
                raise Conflict(f"catalogue '{cat_id}' is {manifest.status} or keeps no uploaded "
                               "file; only a ready catalogue with its file can be re-run")
            folder = self.incoming / cat_id
            folder.mkdir()
            try:
                os.link(kept, folder / kept.name)
            except OSError:
                shutil.copyfile(kept, folder / kept.name)
            rerun = replace(manifest, status="mapping", proposal=proposal, error=None,
                            progress={"stage": "mapping", "fraction": 0.0}, run=manifest.run + 1)
            self._write_manifest(folder / MANIFEST, rerun)
            return rerun

    def discard_rerun(self, cat_id: str) -> Manifest:
        """Drop a re-run that is being mapped or has failed: the previous results show again."""
        with self._lock:
            manifest = self.get(cat_id)
            if not (self.catalogues / cat_id / MANIFEST).is_file() or \
                    not (self.incoming / cat_id).exists():
                raise Conflict(f"catalogue '{cat_id}' has no re-run to discard")
            if manifest.status == "ingesting":
                raise Conflict(f"catalogue '{cat_id}' is being checked; wait until it ends")
            self._remove(self.incoming / cat_id)
            return self.get(cat_id)

    def fail(self, cat_id: str, error: str) -> Manifest:
        """Mark the catalogue failed with a one-line reason; drop its upload and partial output.

        The output goes first (on a full disk that frees the room for the manifest); when even
        the manifest cannot be written, the failure is kept in memory until the next start."""
        with self._lock:
            for child in (self.incoming / cat_id).iterdir():
                if child.name != MANIFEST:
                    with suppress(OSError):
                        self._remove(child)
            try:
                return self.update(cat_id, status="failed", error=error)
            except StorageError:
                failed = replace(self.get(cat_id), status="failed", error=error)
                self._unsaved[cat_id] = failed
                return failed

    def delete(self, cat_id: str) -> None:
        """Remove a catalogue (a re-run in progress too) and its saved views; Conflict while it
        is being ingested."""
        with self._lock:
            manifest = self.get(cat_id)
            if manifest.status == "ingesting":
                raise Conflict(f"catalogue '{cat_id}' is being ingested; delete it when it ends")
            for root in (self.incoming, self.catalogues):
                if (root / cat_id).exists():
                    self._remove(root / cat_id)
        self.delete_views(cat_id)
        self.decisions.forget_catalogue(cat_id)

    def disk_bytes(self, cat_id: str) -> dict[str, int]:
        """Bytes on disk of a catalogue: its checked files and the uploaded file it keeps."""
        folder = self.catalogues / cat_id
        kept = self.kept_source(cat_id) if folder.is_dir() else None
        total = sum(p.stat().st_size for p in folder.rglob("*") if p.is_file()) \
            if folder.is_dir() else 0
        source = kept.stat().st_size if kept else 0
        return {"results": total - source, "source": source}

    def ready_dir(self, cat_id: str) -> Path:
        """The folder of a ready catalogue; NotFound, or NotReady while it is mapped, checked
        (a re-run too) or after it failed."""
        manifest = self.get(cat_id)
        if manifest.status != "ready":
            hint = manifest.error or f"it is {manifest.status}; poll GET /api/catalogues/{cat_id}"
            raise NotReady(f"catalogue '{cat_id}' is not ready: {hint}", cat_id)
        return self.catalogues / cat_id

    def recover(self) -> None:
        """After a crash: drop half uploads and temp files, fail ingests that were cut off."""
        for child in self.tmp.iterdir():
            self._remove(child)
        for folder in list(self.incoming.iterdir()):
            self._recover_one(folder)

    def _recover_one(self, folder: Path) -> None:
        """Bring one ``incoming/`` folder to a consistent state."""
        if not (folder / MANIFEST).is_file() or self._published(folder):
            self._remove(folder)  # an upload cut off, or a publish cut off after its rename
            return
        try:
            manifest = self.get(folder.name)
        except (ValueError, OSError):
            self._remove(folder)
            return
        if manifest.status == "ingesting":
            self.fail(manifest.id, KILLED)

    def _published(self, folder: Path) -> bool:
        """Whether ``catalogues/`` already holds the run ``folder`` (in ``incoming/``) was for:
        a re-run's folder has a higher run number than the catalogue it re-runs."""
        ready = self.catalogues / folder.name / MANIFEST
        if not ready.is_file():
            return False
        try:
            runs = [json.loads(p.read_text(encoding="utf-8")).get("run", 1)
                    for p in (folder / MANIFEST, ready)]
        except (ValueError, OSError):
            return True
        return bool(runs[0] <= runs[1])

    @staticmethod
    def _write_manifest(path: Path, manifest: Manifest) -> None:
        """Write a manifest atomically; a full or read-only disk becomes StorageError."""
        try:
            write_json_atomic(path, manifest.to_json())
        except OSError as err:
            raise (storage_error(err) or err) from err

    def _manifest_path(self, cat_id: str) -> Path | None:
        """Where the manifest of ``cat_id`` is, or None."""
        if not _ID.match(cat_id):
            return None
        for root in (self.incoming, self.catalogues):  # a re-run shadows the ready catalogue
            path = root / cat_id / MANIFEST
            if path.is_file():
                return path
        return None

    def _remove(self, path: Path) -> None:
        """Delete a file or folder: renamed into tmp/ first so a crash leaves no half folder."""
        if path.is_dir():
            doomed = self.tmp / f"{path.name}.{secrets.token_hex(4)}.deleted"
            os.replace(path, doomed)
            shutil.rmtree(doomed, ignore_errors=True)
        else:
            path.unlink(missing_ok=True)

    # --- saved views -----------------------------------------------------------------------
    @contextmanager
    def _db(self) -> Iterator[sqlite3.Connection]:
        """A short-lived connection in a transaction (one per call keeps threads apart)."""
        with closing(sqlite3.connect(self.db_path, timeout=30)) as conn:
            with conn:
                yield conn
            if conn.total_changes:  # committed: kept reads of the database are stale
                self._generation = next(self._writes)

    def _init_db(self) -> None:
        """Create the tables and switch the database to write-ahead logging."""
        with self._db() as conn:
            conn.execute("PRAGMA journal_mode=WAL")
            conn.execute(
                "CREATE TABLE IF NOT EXISTS views (slug TEXT PRIMARY KEY, catalogue TEXT NOT NULL,"
                " query TEXT NOT NULL, title TEXT NOT NULL, note TEXT NOT NULL,"
                " created TEXT NOT NULL)"
            )
            conn.execute("CREATE INDEX IF NOT EXISTS views_by_catalogue ON views (catalogue)")

    def save_view(self, catalogue: str, query: str, title: str, note: str) -> SavedView:
        """Store a view under a new slug; the catalogue must exist."""
        self.get(catalogue)
        view = SavedView(new_slug(), catalogue, query, title, note, now())
        with self._db() as conn:
            conn.execute("INSERT INTO views VALUES (?, ?, ?, ?, ?, ?)",
                         (view.slug, view.catalogue, view.query, view.title, view.note,
                          view.created))
        return view

    def get_view(self, slug: str) -> SavedView:
        """The saved view ``slug``; NotFound if there is none."""
        with self._db() as conn:
            row = conn.execute("SELECT * FROM views WHERE slug = ?", (slug,)).fetchone()
        if row is None:
            raise NotFound(f"no saved view '{slug}'")
        return SavedView(*row)

    def list_views(self, catalogue: str) -> builtins.list[SavedView]:
        """The saved views of a catalogue, newest first."""
        with self._db() as conn:
            rows = conn.execute(
                "SELECT * FROM views WHERE catalogue = ? ORDER BY created DESC, slug",
                (catalogue,),
            ).fetchall()
        return [SavedView(*row) for row in rows]

    def delete_views(self, catalogue: str) -> None:
        """Forget the saved views of a deleted catalogue."""
        with self._db() as conn:
            conn.execute("DELETE FROM views WHERE catalogue = ?", (catalogue,))
