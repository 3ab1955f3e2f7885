"""Mapping presets: the choices of a mapping step (field -> column, field -> unit, label ->
family) saved for a source's header, and offered again when a file with the same header comes.

A preset is keyed by its header: the column names in order, hashed. It lives in the data
directory's SQLite database beside the saved views (its own table, created on first use).
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
from collections.abc import Iterator, Sequence
from contextlib import closing, contextmanager
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

from bodycensus.storage.manifest import OverridesRecord


def header_key(columns: Sequence[str]) -> str:
    """The key of a header: a hash of its column names in order (unit separators between)."""
    return hashlib.sha256("\x1f".join(columns).encode("utf-8")).hexdigest()[:32]


@dataclass(frozen=True)
class Preset:
    """Mapping choices saved for one header, with when and from which file."""

    key: str
    columns: list[str]
    choices: OverridesRecord
    source: str
    saved: str


class Presets:
    """The mapping presets of one data directory (SQLite, a short connection per call)."""

    def __init__(self, db_path: Path) -> None:
        self.db_path = db_path
        with self._db() as conn:
            conn.execute("CREATE TABLE IF NOT EXISTS mapping_presets (key TEXT PRIMARY KEY, "
                         "columns TEXT NOT NULL, choices TEXT NOT NULL, source TEXT NOT NULL, "
                         "saved TEXT NOT NULL)")

    @contextmanager
    def _db(self) -> Iterator[sqlite3.Connection]:
        with closing(sqlite3.connect(self.db_path, timeout=30)) as conn, conn:
            yield conn

    def save(self, columns: Sequence[str], choices: OverridesRecord, source: str) -> Preset:
        """Store (or replace) the preset of this header."""
        preset = Preset(header_key(columns), list(columns), choices, source,
                        datetime.now(UTC).isoformat(timespec="seconds"))
        with self._db() as conn:
            conn.execute("INSERT OR REPLACE INTO mapping_presets VALUES (?, ?, ?, ?, ?)",
                         (preset.key, json.dumps(preset.columns), json.dumps(dict(choices)),
                          source, preset.saved))
        return preset

    def find(self, columns: Sequence[str]) -> Preset | None:
        """The preset saved for exactly this header, if any."""
        with self._db() as conn:
            row = conn.execute("SELECT * FROM mapping_presets WHERE key = ?",
                               (header_key(columns),)).fetchone()
        if row is None:
            return None
        key, stored_columns, choices, source, saved = row
        return Preset(key, json.loads(stored_columns), json.loads(choices), source, saved)

    def forget(self, columns: Sequence[str]) -> None:
        """Drop the preset of this header."""
        with self._db() as conn:
            conn.execute("DELETE FROM mapping_presets WHERE key = ?", (header_key(columns),))
