"""The domain's errors: one small tree, free of any web framework, used by every floor.

    BodycensusError            500 internal  (never raised on purpose)
     +-- NotFound              404 not_found
     +-- BadInput              400 bad_input
     |    +-- InputError       422 bad_input (a file, column, unit or family that cannot be used;
     |                                        also a ValueError: IngestError, SchemaError, ...)
     +-- Conflict              409 conflict  (e.g. a catalogue that is not ready yet)
     |    +-- NotReady         409 conflict  (a page of it opens its mapping step or progress)
     +-- TooLarge              413 too_large
     +-- StorageError          507 storage   (the data directory cannot be written)

``status`` and ``code`` say how the web layer answers (its handlers live in
``dashboard/error_pages.py``); the command line exits 2 on any of them. Every message is one
line that says where and what to do.
"""

from __future__ import annotations

import errno
import os
from typing import Any

_MAX_DETAIL = 300
_DISK_WORDS = {"no space left": errno.ENOSPC, "os error 28": errno.ENOSPC,
               "read-only file system": errno.EROFS, "os error 30": errno.EROFS,
               "permission denied": errno.EACCES, "os error 13": errno.EACCES}
_DISK_ERRNOS = (errno.ENOSPC, errno.EROFS, errno.EACCES, errno.EPERM)


class BodycensusError(Exception):
    """Base of the domain's errors; ``status`` and ``code`` decide the web answer."""

    status = 500
    code = "internal"

    def __init__(self, detail: str, status: int | None = None) -> None:
        super().__init__(detail)
        self.detail = detail
        if status is not None:
            self.status = status


class NotFound(BodycensusError):
    """A catalogue, body or view that does not exist."""

    status, code = 404, "not_found"


class BadInput(BodycensusError):
    """A parameter, file or request body that cannot be used; the detail says what to do."""

    status, code = 400, "bad_input"


class InputError(BadInput, ValueError):
    """A file, column, unit or family mapping that cannot be used (422)."""

    status = 422


class Conflict(BodycensusError):
    """A request that does not fit the current state, e.g. findings of a catalogue still ingesting.
    """

    status, code = 409, "conflict"


class NotReady(Conflict):
    """A catalogue that is being mapped, checked or has failed: the API answers 409, a page
    sends the person to the catalogue's own page (its mapping step, progress or failure)."""

    def __init__(self, detail: str, catalogue: str) -> None:
        super().__init__(detail)
        self.catalogue = catalogue


class TooLarge(BodycensusError):
    """An upload or decompressed file past a configured limit."""

    status, code = 413, "too_large"


class StorageError(BodycensusError):
    """The data directory cannot be written (full disk, read-only, no permission): 507."""

    status, code = 507, "storage"


def one_line(text: Any) -> str:
    """``text`` squeezed onto one short line, for the ``detail`` of an error."""
    flat = " ".join(str(text).split())
    return flat if len(flat) <= _MAX_DETAIL else flat[: _MAX_DETAIL - 1] + "…"


def _disk_errno(err: BaseException) -> int | None:
    """The disk-full / read-only / permission errno behind ``err`` (polars hides it in text)."""
    if isinstance(err, OSError) and err.errno in _DISK_ERRNOS:
        return err.errno
    text = str(err).lower()
    return next((code for words, code in _DISK_WORDS.items() if words in text), None)


def storage_error(err: BaseException, retry: str = "try again") -> StorageError | None:
    """The one-line StorageError for a disk fault met while writing the data directory, or None
    when ``err`` is no disk fault. ``retry`` ends the message (what the person does next)."""
    code = _disk_errno(err)
    if code is None:
        return None
    if code == errno.ENOSPC:
        return StorageError(f"the disk of the data directory is full; free space and {retry}")
    reason = err.strerror if isinstance(err, OSError) and err.strerror else os.strerror(code)
    return StorageError(f"the data directory cannot be written ({reason}); fix its permissions "
                        f"or mount and {retry}")
