"""Triage decisions in SQLite: what a team decided about a finding or a group of findings.

A decision says that findings are ``confirmed`` (a real defect), ``accepted`` (physically fine,
e.g. a known transient state) or ``wontfix``, with a note, who decided and when. It names what it
covers by what identifies a finding across reruns, never by a row number:

- ``finding``: one body and one rule (``target`` is the body id); a selection of findings is
  stored as one such decision per finding;
- ``system``: every finding of one rule in one system (``target`` is the system name);
- ``label``: every finding of one rule on bodies of one label (``target`` is the label).

Decisions belong to a *catalogue key*, not to one upload: every upload of the same catalogue
shares its decisions. A catalogue's key is, unless someone sets another on its Triage screen, its
file name without the format and compression suffixes (``universe.csv.gz`` -> ``universe``), so
next week's ``universe.csv`` finds this week's decisions. The key chosen for a catalogue is kept
in the table ``catalogue_keys``.
"""

from __future__ import annotations

import sqlite3
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable, Iterable, Iterator
from contextlib import AbstractContextManager, closing
from dataclasses import astuple, dataclass
from pathlib import Path
from typing import Literal, cast, get_args

from bodycensus.errors import BadInput
from bodycensus.input.formats import catalogue_suffix

Status = Literal["confirmed", "accepted", "wontfix"]
Scope = Literal["finding", "system", "label"]
STATUSES: tuple[Status, ...] = get_args(Status)
SCOPES: tuple[Scope, ...] = get_args(Scope)  # most specific first: the first that matches wins
MAX_TEXT = 2000  # characters of a note
MAX_NAME = 200  # characters of a rule, target, key or name
Connect = Callable[[], AbstractContextManager[sqlite3.Connection]]

_SCHEMA = (
    "CREATE TABLE IF NOT EXISTS decisions (catalogue_key TEXT NOT NULL, scope TEXT NOT NULL,"
    " rule TEXT NOT NULL, target TEXT NOT NULL, status TEXT NOT NULL, note TEXT NOT NULL,"
    " decided_by TEXT NOT NULL, decided TEXT NOT NULL,"
    " PRIMARY KEY (catalogue_key, scope, rule, target))",
    "CREATE TABLE IF NOT EXISTS catalogue_keys (catalogue TEXT PRIMARY KEY, key TEXT NOT NULL)",
)
_COLUMNS = "scope, rule, target, status, note, decided_by, decided"


@dataclass(frozen=True)
class Decision:
    """One decision: what it covers (scope, rule, target) and what was decided, by whom, when."""

    scope: Scope
    rule: str
    target: str
    status: Status
    note: str = ""
    by: str = ""
    decided: str = ""  # ISO 8601 time

    def __post_init__(self) -> None:
        check_decision(self)

    @property
    def key(self) -> tuple[str, str, str]:
        """What the decision covers; two decisions with one key cannot both stand."""
        return self.scope, self.rule, self.target

    def describe(self) -> str:
        """One line naming what the decision covers, e.g. ``rule X on label 'ice moon'``."""
        where = {"finding": "body", "system": "system", "label": "label"}[self.scope]
        return f"{self.status}: rule {self.rule} on {where} '{self.target}'"


def check_decision(decision: Decision) -> None:
    """BadInput, in one line, when a decision's scope, status or texts are not acceptable."""
    if decision.scope not in SCOPES:
        raise BadInput(f"scope {decision.scope!r} is unknown; use one of {', '.join(SCOPES)}")
    if decision.status not in STATUSES:
        raise BadInput(f"status {decision.status!r} is unknown; use one of {', '.join(STATUSES)}")
    for name in ("rule", "target"):
        text = getattr(decision, name)
        if not isinstance(text, str) or not text.strip() or len(text) > MAX_NAME:
            raise BadInput(f"a decision needs a {name} of 1 to {MAX_NAME} characters")
    if len(decision.note) > MAX_TEXT or len(decision.by) > MAX_NAME:
        raise BadInput(f"a note holds at most {MAX_TEXT} characters, a name {MAX_NAME}")


def default_key(name: str) -> str:
    """The catalogue key of an upload named ``name``: the name without its format suffix."""
    suffix = catalogue_suffix(name)
    stem = name[: -len(suffix)] if suffix else name
    return stem.strip() or name


def check_key(key: str) -> str:
    """A catalogue key, stripped; BadInput when empty or too long."""
    key = key.strip()
    if not key or len(key) > MAX_NAME or any(ord(c) < 32 for c in key):
        raise BadInput(f"a catalogue key is 1 to {MAX_NAME} printable characters")
    return key


READS_KEPT = 256  # answers of read queries kept while the database does not change
Row = tuple[object, ...]


def _file_version(path: Path) -> tuple[int, ...]:
    """A file's inode, modification time and size; empty when it does not exist."""
    try:
        seen = path.stat()
    except FileNotFoundError:
        return ()
    return seen.st_ino, seen.st_mtime_ns, seen.st_size


class DecisionBook:
    """The decisions of every catalogue key, and the key chosen for each catalogue.

    Reads are answered from memory while the database is unchanged: every screen asks for the
    decisions of its catalogue, and a connection opened (and closed, which checkpoints the
    write-ahead log) per request cost ~6% of a loaded server's time. "Unchanged" is
    ``version``: the count of this process's committed writes (``generation``, kept by the
    store's connections) with the database file's and its write-ahead log's inode, modification
    time and size, which any other process's commit changes. No connection is kept open: one
    held open would keep the log from being checkpointed into the file when the others close,
    and a data directory with a file open for writing cannot be remounted read-only."""

    def __init__(self, connect: Connect, db_path: Path,
                 generation: Callable[[], int] = lambda: 0) -> None:
        self._connect, self._path, self._generation = connect, db_path, generation
        with connect() as conn:
            for statement in _SCHEMA:
                conn.execute(statement)
        self._kept: OrderedDict[tuple[str, tuple[str, ...]], tuple[Hashable, list[Row]]]
        self._kept = OrderedDict()
        self._lock = threading.Lock()

    def version(self) -> Hashable:
        """What changes whenever anything (decisions, keys, saved views, presets) is committed
        to the database, by this process or another (see the class)."""
        return (self._generation(), _file_version(self._path),
                _file_version(self._path.with_name(self._path.name + "-wal")))

    def _read(self, sql: str, params: tuple[str, ...]) -> list[Row]:
        """Rows of a query, from memory while the database has not changed since they were
        read (see the class); the version is taken before reading, so a write during the read
        leaves rows filed under the old version."""
        version, slot = self.version(), (sql, params)
        with self._lock:
            kept = self._kept.get(slot)
            if kept is not None and kept[0] == version:
                self._kept.move_to_end(slot)
                return kept[1]
        rows = self._read_file(sql, params)
        with self._lock:
            self._kept[slot] = (version, rows)
            while len(self._kept) > READS_KEPT:
                self._kept.popitem(last=False)
        return rows

    def _read_file(self, sql: str, params: tuple[str, ...]) -> list[Row]:
        """Rows of a query read from the database. When the data directory has become
        read-only (a full or remounted disk), SQLite cannot open its write-ahead log; the file
        is then read as immutable, so the screens still show the decisions (every connection
        closes, which checkpoints the log into the file)."""
        try:
            with self._connect() as conn:
                return conn.execute(sql, params).fetchall()
        except sqlite3.OperationalError:
            uri = f"{self._path.resolve().as_uri()}?mode=ro&immutable=1"
            with closing(sqlite3.connect(uri, uri=True)) as conn:
                return conn.execute(sql, params).fetchall()

    def key_of(self, catalogue: str, name: str) -> str:
        """The key of catalogue ``catalogue`` (uploaded as ``name``): chosen, else the default."""
        rows = self._read("SELECT key FROM catalogue_keys WHERE catalogue = ?", (catalogue,))
        return str(rows[0][0]) if rows else default_key(name)

    def set_key(self, catalogue: str, key: str) -> str:
        """Choose the key of a catalogue (its decisions are then those of ``key``)."""
        key = check_key(key)
        with self._connect() as conn:
            conn.execute("INSERT OR REPLACE INTO catalogue_keys VALUES (?, ?)", (catalogue, key))
        return key

    def forget_catalogue(self, catalogue: str) -> None:
        """Drop the key chosen for a deleted catalogue (its key's decisions stay)."""
        with self._connect() as conn:
            conn.execute("DELETE FROM catalogue_keys WHERE catalogue = ?", (catalogue,))

    def decide(self, key: str, decisions: Iterable[Decision]) -> int:
        """Store decisions under ``key``, each replacing any earlier one of the same key."""
        rows = [(key, *astuple(d)) for d in decisions]
        with self._connect() as conn:
            conn.executemany(f"INSERT OR REPLACE INTO decisions (catalogue_key, {_COLUMNS})"
                             " VALUES (?, ?, ?, ?, ?, ?, ?, ?)", rows)
        return len(rows)

    def undo(self, key: str, covers: Iterable[tuple[str, str, str]]) -> int:
        """Remove the decisions of ``key`` that cover these (scope, rule, target); how many."""
        with self._connect() as conn:
            cursor = conn.executemany(
                "DELETE FROM decisions WHERE catalogue_key = ? AND scope = ? AND rule = ?"
                " AND target = ?", [(key, *cover) for cover in covers])
            return cursor.rowcount

    def replace_all(self, key: str, decisions: Iterable[Decision]) -> int:
        """Make ``decisions`` the whole set of ``key`` (an imported file), in one transaction."""
        rows = [(key, *astuple(d)) for d in decisions]
        with self._connect() as conn:
            conn.execute("DELETE FROM decisions WHERE catalogue_key = ?", (key,))
            conn.executemany(f"INSERT OR REPLACE INTO decisions (catalogue_key, {_COLUMNS})"
                             " VALUES (?, ?, ?, ?, ?, ?, ?, ?)", rows)
        return len(rows)

    def of(self, key: str) -> list[Decision]:
        """Every decision of ``key``, in a stable order (scope, rule, target)."""
        return list(_decisions(self._read(f"SELECT {_COLUMNS} FROM decisions WHERE "
                                          "catalogue_key = ? ORDER BY scope, rule, target",
                                          (key,))))


def _decisions(rows: Iterable[tuple[object, ...]]) -> Iterator[Decision]:
    for scope, rule, target, status, note, by, decided in rows:
        yield Decision(cast(Scope, scope), str(rule), str(target), cast(Status, status),
                       str(note), str(by), str(decided))
