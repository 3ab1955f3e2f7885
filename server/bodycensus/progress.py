"""How a long run reports where it is: one callback type for the ingest, the engine and their
watchers (the command line's stderr lines, the dashboard's progress bar).

Beside ``errors`` on the bottom floor, because the ingest (input) and the engine both call it.
"""

from __future__ import annotations

from typing import Protocol


class Progress(Protocol):
    """Told a stage and how far it is, and the row count once it is known.

    ``done`` is the fraction of the stage (0 at its start, 1 at its end) for the engine's stages
    (``read``, ``derive``, ``rules``, ``artefacts``, ``write``), and a count so far for the
    ingest's own (bytes for ``decompress``, rows for ``read`` and ``write``)."""

    def __call__(self, stage: str, done: float, /, rows: int | None = None) -> None: ...


def quiet(stage: str, done: float, /, rows: int | None = None) -> None:
    """The progress callback of a caller that does not watch."""
