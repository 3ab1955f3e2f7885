"""Stream a multipart upload straight to disk, never whole in memory, within a size limit.

The request body is fed chunk by chunk to python-multipart's parser; the bytes of the ``file``
field go to ``incoming/<id>/source<suffix>`` as they arrive. Past ``max_bytes`` on the wire the
upload stops with ``TooLarge`` and nothing of it stays on disk.
"""

from __future__ import annotations

import os
import re
import unicodedata
from contextlib import suppress
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, BinaryIO

from python_multipart.exceptions import MultipartParseError
from python_multipart.multipart import MultipartParser, parse_options_header
from starlette.concurrency import run_in_threadpool
from starlette.requests import ClientDisconnect, Request

from bodycensus.errors import BadInput, TooLarge, storage_error
from bodycensus.input.formats import catalogue_suffix, suffix_hint
from bodycensus.input.readers import compression_hint
from bodycensus.storage.store import Store

if TYPE_CHECKING:  # declared for type checkers only by python-multipart
    from python_multipart.multipart import MultipartCallbacks

FIELD = "file"
_FLUSH = 1 << 20
_MAX_NAME = 120


@dataclass(frozen=True)
class Upload:
    """A file received in full: its reserved catalogue id, display name, suffix and path."""

    id: str
    name: str
    suffix: str
    path: Path
    size: int


def display_name(filename: str) -> str:
    """The file's base name without folders or control characters, at most 120 characters
    (a long name keeps its start and its suffix). Only ever shown: never used as a path."""
    base = re.split(r"[\\/]", filename)[-1]
    clean = "".join(ch for ch in base if unicodedata.category(ch)[0] != "C").strip(" .")
    if len(clean) > _MAX_NAME:
        suffix = clean[-12:].partition(".")[2]
        keep = _MAX_NAME - len(suffix) - 2
        clean = f"{clean[:keep]}….{suffix}" if suffix else clean[: _MAX_NAME - 1] + "…"
    return clean or "upload"


def file_suffix(filename: str) -> str:
    """The supported suffix of ``filename`` (e.g. ``.csv.gz``); BadInput 415 otherwise."""
    suffix = catalogue_suffix(filename)
    if suffix is None:
        raise BadInput(f"'{display_name(filename)}' is not a supported file: name it "
                       f"{suffix_hint()}", status=415)
    return suffix


class _Receiver:
    """Parser callbacks that route the ``file`` part's bytes to one open file on disk."""

    def __init__(self, store: Store) -> None:
        self.store = store
        self.headers: dict[bytes, bytes] = {}
        self._field = b""
        self._value = b""
        self.in_file = False
        self.done_file = False
        self.upload: tuple[str, str, str, Path] | None = None  # id, name, suffix, path
        self.handle: BinaryIO | None = None
        self.buffer = bytearray()

    def callbacks(self) -> MultipartCallbacks:
        """The callback table for MultipartParser."""
        return {"on_part_begin": self._begin, "on_header_field": self._header_field,
                "on_header_value": self._header_value, "on_header_end": self._header_end,
                "on_headers_finished": self._headers_finished, "on_part_data": self._data,
                "on_part_end": self._end}

    def _begin(self) -> None:
        self.headers, self.in_file = {}, False

    def _header_field(self, data: bytes, start: int, end: int) -> None:
        self._field += data[start:end]

    def _header_value(self, data: bytes, start: int, end: int) -> None:
        self._value += data[start:end]

    def _header_end(self) -> None:
        self.headers[self._field.lower()] = self._value
        self._field, self._value = b"", b""

    def _headers_finished(self) -> None:
        _, params = parse_options_header(self.headers.get(b"content-disposition", b""))
        if params.get(b"name") != FIELD.encode() or self.done_file:
            return
        filename = params.get(b"filename", b"").decode("utf-8", "replace")
        suffix = file_suffix(filename)
        cat_id, path = self.store.new_upload(suffix)
        self.upload = (cat_id, display_name(filename), suffix, path)
        self.handle = open(path, "wb")  # noqa: SIM115 - closed in finish()/abort()
        self.in_file = True

    def _data(self, data: bytes, start: int, end: int) -> None:
        if self.in_file:
            self.buffer += data[start:end]

    def _end(self) -> None:
        if self.in_file:
            self.in_file, self.done_file = False, True

    def take(self, final: bool = False) -> bytes:
        """The buffered file bytes to write now (when enough collected, or at the end)."""
        if self.handle is None or (len(self.buffer) < _FLUSH and not final):
            return b""
        out, self.buffer = bytes(self.buffer), bytearray()
        return out


def _write(handle: BinaryIO, data: bytes, final: bool) -> None:
    """Append ``data``; at the end, flush and fsync so the upload survives a crash."""
    handle.write(data)
    if final:
        handle.flush()
        os.fsync(handle.fileno())


async def receive_upload(request: Request, store: Store, max_bytes: int) -> Upload:
    """Stream the request's ``file`` field to a new incoming folder; remove it on any failure."""
    boundary = _boundary(request)
    declared = request.headers.get("content-length", "")
    if declared.isdigit() and int(declared) > max_bytes:
        raise TooLarge(_too_large(max_bytes))
    receiver = _Receiver(store)
    try:
        size = await _pump(request, MultipartParser(boundary, receiver.callbacks()), receiver,
                           max_bytes)
        return _finish(receiver, store, size)
    except OSError as err:  # the data directory is full or not writable
        _abort(receiver, store)
        raise (storage_error(err) or err) from err
    except BaseException:
        _abort(receiver, store)
        raise


async def _pump(request: Request, parser: MultipartParser, receiver: _Receiver,
                max_bytes: int) -> int:
    """Feed the body to the parser, writing file bytes as they come; returns bytes received."""
    received = 0
    try:
        async for chunk in request.stream():
            received = await _feed(chunk, received, parser, receiver, max_bytes)
    except ClientDisconnect as err:
        raise BadInput("the upload was interrupted before it ended; send the file again") from err
    parser.finalize()
    if receiver.handle is not None:
        await run_in_threadpool(_write, receiver.handle, receiver.take(final=True), True)
    return received


async def _feed(chunk: bytes, received: int, parser: MultipartParser, receiver: _Receiver,
                max_bytes: int) -> int:
    """Parse one chunk of the body and write what the file part gained; bytes so far."""
    received += len(chunk)
    if received > max_bytes:
        raise TooLarge(_too_large(max_bytes))
    try:
        parser.write(chunk)
    except MultipartParseError as err:
        raise BadInput("the upload is not valid multipart/form-data; send the file as "
                       f"form field '{FIELD}'") from err
    if receiver.handle is not None and (data := receiver.take()):
        await run_in_threadpool(_write, receiver.handle, data, False)
    return received


def _finish(receiver: _Receiver, store: Store, size: int) -> Upload:
    """Close the file and check that a whole, non-empty file arrived."""
    if receiver.handle is None or receiver.upload is None:
        raise BadInput(f"no form field '{FIELD}' with a file; send the catalogue as field "
                       f"'{FIELD}'")
    receiver.handle.close()
    cat_id, name, suffix, path = receiver.upload
    if not receiver.done_file:
        store.discard(cat_id)
        raise BadInput("the upload ended before the file did; send it again")
    if path.stat().st_size == 0:
        store.discard(cat_id)
        raise BadInput(f"'{name}' is empty; upload a file with a header row and data", 422)
    return Upload(cat_id, name, suffix, path, size)


def _abort(receiver: _Receiver, store: Store) -> None:
    """Close and delete whatever part of the upload reached the disk (as far as the disk lets)."""
    with suppress(OSError):
        if receiver.handle is not None:
            receiver.handle.close()
        if receiver.upload is not None:
            store.discard(receiver.upload[0])


def _boundary(request: Request) -> bytes:
    """The multipart boundary of the request; BadInput 415 if it is not multipart."""
    kind, params = parse_options_header(request.headers.get("content-type", ""))
    if kind != b"multipart/form-data" or not params.get(b"boundary"):
        raise BadInput(f"send the catalogue as multipart/form-data with the file in field "
                       f"'{FIELD}'", status=415)
    return params[b"boundary"]


def _too_large(max_bytes: int) -> str:
    """The one-line reason for a refused upload."""
    return (f"the upload is larger than the limit of {max_bytes:,} bytes; compress it "
            f"({compression_hint()}) or start the server with a larger max_upload_bytes")
