"""Answers kept: the rendered answers of a ready catalogue's reads, sent again while nothing
they depend on has changed.

A ready catalogue's files never change under it (a re-run publishes a new folder with a new
manifest); what else a read shows lives in SQLite (triage decisions, the catalogue key, saved
views). So an answer is kept under the catalogue's manifest version (``Store.ready_version``),
the database's version (``DecisionBook.version``), the path and the query; a decision saved, a
rename or a re-run changes one of them and the next request renders afresh. Both versions are
read before the answer is rendered, so a change made while it renders files it under the old
versions, never the new.

Why: under 16 clients the overview, the diagram pages and the first pages of the Systems list
were rendered again for every request (a 10M catalogue's mass-radius page alone took ~70 ms of
one core, see bench/latency.py), although they are the same every time.

Only GET requests of the paths in ``KEPT_PATHS`` are kept: JSON reads and the diagram pages,
none of which reads a cookie or another header (the findings, body and system pages show the
name typed in their decide form, from a cookie, so they are not kept). A pure ASGI middleware
inside the gate (``security.guard``), which checks the token and adds the security headers
first, so a kept answer is only ever sent to a request that passed it.
"""

from __future__ import annotations

import re
import threading
from collections import OrderedDict
from collections.abc import Hashable
from dataclasses import dataclass, field
from urllib.parse import unquote

from starlette.types import ASGIApp, Message, Receive, Scope, Send

from bodycensus.storage.store import Store

KEPT_PATHS = re.compile(r"^(?:/api/catalogues/(?P<api>[^/]+)/(?:overview|findings|systems|"
                        r"aggregates|artefacts|coverage|(?:bodies|systems)/.+)"
                        r"|/catalogues/(?P<page>[^/]+)/diagrams)$")
MAX_BYTES = 64 * 2**20  # of answers kept in all, least recently sent dropped first
MAX_ANSWER = 4 * 2**20  # an answer larger than this is not kept
STATUS_HEADER = b"x-bodycensus-answer"  # "kept" or "rendered", for tests and curious people


@dataclass(frozen=True)
class Answer:
    """A rendered answer: status, headers and body."""

    status: int
    headers: list[tuple[bytes, bytes]]
    body: bytes


@dataclass
class AnswerBook:
    """Answers by key, at most ``max_bytes`` of bodies, least recently sent dropped first."""

    max_bytes: int = MAX_BYTES
    size: int = 0
    kept: OrderedDict[Hashable, Answer] = field(default_factory=OrderedDict)
    lock: threading.Lock = field(default_factory=threading.Lock)

    def get(self, key: Hashable) -> Answer | None:
        """The answer kept under ``key``, if any."""
        with self.lock:
            answer = self.kept.get(key)
            if answer is not None:
                self.kept.move_to_end(key)
            return answer

    def put(self, key: Hashable, answer: Answer) -> None:
        """Keep ``answer`` under ``key``, dropping the least recently sent past the budget."""
        with self.lock:
            old = self.kept.pop(key, None)
            self.size -= len(old.body) if old else 0
            self.kept[key] = answer
            self.size += len(answer.body)
            while self.size > self.max_bytes and self.kept:
                self.size -= len(self.kept.popitem(last=False)[1].body)


class KeptAnswers:
    """The middleware: sends a kept answer when its key matches, else renders and keeps it."""

    def __init__(self, app: ASGIApp, max_bytes: int = MAX_BYTES) -> None:
        self.app = app
        self.book = AnswerBook(max_bytes)

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        key = self._key(scope) if scope["type"] == "http" and scope["method"] == "GET" else None
        if key is None:
            await self.app(scope, receive, send)
            return
        kept = self.book.get(key)
        if kept is not None:
            await send({"type": "http.response.start", "status": kept.status,
                        "headers": [*kept.headers, (STATUS_HEADER, b"kept")]})
            await send({"type": "http.response.body", "body": kept.body})
            return
        await self.app(scope, receive, self._keeping(key, send))

    def _key(self, scope: Scope) -> Hashable | None:
        """What a kept answer to this request depends on, or None when it is not kept (another
        path, a catalogue that is not ready)."""
        found = KEPT_PATHS.match(scope["path"])
        store: Store | None = getattr(scope["app"].state, "store", None) \
            if "app" in scope else None
        if found is None or store is None:
            return None
        run = store.ready_version(unquote(found["api"] or found["page"]))
        if run is None:
            return None
        return run, store.decisions.version(), scope["path"], scope.get("query_string", b"")

    def _keeping(self, key: Hashable, send: Send) -> Send:
        """``send`` that also keeps a complete 200 answer of at most ``MAX_ANSWER`` bytes."""
        start: dict[str, Message] = {}
        parts: list[bytes] = []
        size = 0

        async def wrapped(message: Message) -> None:
            nonlocal size
            if message["type"] == "http.response.start":
                start["message"] = message
                message = {**message, "headers": [*message.get("headers", []),
                                                  (STATUS_HEADER, b"rendered")]}
            elif message["type"] == "http.response.body" and size <= MAX_ANSWER:
                parts.append(message.get("body", b""))
                size += len(parts[-1])
                first = start.get("message")
                if not message.get("more_body", False) and first is not None \
                        and first["status"] == 200 and size <= MAX_ANSWER:
                    self.book.put(key, Answer(200, list(first.get("headers", [])),
                                              b"".join(parts)))
            await send(message)
        return wrapped
