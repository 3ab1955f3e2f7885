"""Open any supported catalogue file and say, by line and column, why one cannot be read.

The compression layer is a registry (``COMPRESSIONS``: gzip, zstd), found by suffix, else by
magic bytes, and decompressed as a stream that stops at a size limit. The ``*_fault`` functions
return a one-line 'where: what; what to do' for text that polars would reject or silently
misread; the readers of ``formats`` use them for the upload's first look (``sniff``) and for the
ingest alike, so both give the same answer.
"""

from __future__ import annotations

import codecs
import csv
import gzip
import io
import json
import os
import re
import tempfile
import zlib
from collections.abc import Callable, Generator, Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, BinaryIO

import polars as pl
import zstandard

from bodycensus.errors import InputError

if TYPE_CHECKING:
    from polars._typing import PolarsDataType  # a data type as an instance or its class

CHUNK = 1 << 20
HEAD_BYTES = 2 << 20  # what the first look and the text checks read of a file
DELIMITERS = (",", "\t", ";")
_DELIMITER_WORDS = {",": "commas", "\t": "tabs", ";": "semicolons"}
_ODD_SEPARATORS = ("|", ":", "  ", "^", "~")
_UNREADABLE = ("binary data, UTF-16 text or a JSON array cannot be read; export it as UTF-8 "
               "CSV/TSV, NDJSON (one object per line) or Parquet")


class IngestError(InputError):
    """A file that cannot be read at all; the message is one line: where, what, and what to do."""


def first_line(err: BaseException) -> str:
    """The first line of an exception's message (polars messages run to many lines)."""
    return (str(err).strip() or type(err).__name__).splitlines()[0]


# --- compression ---------------------------------------------------------------------------


def _plain_chunks(raw: BinaryIO) -> Iterator[bytes]:
    """An uncompressed file in chunks."""
    yield from iter(lambda: raw.read(CHUNK), b"")


def _gzip_chunks(raw: BinaryIO) -> Iterator[bytes]:
    """Decompressed chunks of a (possibly multi-member) gzip stream."""
    with gzip.GzipFile(fileobj=raw) as fh:
        yield from iter(lambda: fh.read(CHUNK), b"")


def _zstd_chunks(raw: BinaryIO) -> Iterator[bytes]:
    """Decompressed chunks of a (possibly multi-frame) zstd stream; raises if it is truncated."""
    decoder, pending = zstandard.ZstdDecompressor().decompressobj(), False
    while chunk := raw.read(CHUNK):
        while chunk:
            yield decoder.decompress(chunk)
            pending, chunk = not decoder.eof, b""
            if decoder.eof:  # the next frame, if any, starts in the unused bytes
                chunk, decoder = decoder.unused_data, zstandard.ZstdDecompressor().decompressobj()
    if pending:
        raise EOFError("the stream ends inside a frame")


@dataclass(frozen=True)
class Compression:
    """One compression: its suffixes, its magic bytes, a reader of its decompressed chunks and
    the exceptions that reader raises on corrupt or truncated data."""

    name: str
    suffixes: tuple[str, ...]  # lower case, with the dot; the first is the one suggested
    magic: bytes
    chunks: Callable[[BinaryIO], Iterator[bytes]]
    errors: tuple[type[Exception], ...]


COMPRESSIONS: tuple[Compression, ...] = (
    Compression("gzip", (".gz", ".gzip"), b"\x1f\x8b", _gzip_chunks, (zlib.error,)),
    Compression("zstd", (".zst", ".zstd"), b"\x28\xb5\x2f\xfd", _zstd_chunks,
                (zstandard.ZstdError,)),
)


def join_or(words: Iterable[str]) -> str:
    """``a, b or c``: a list of alternatives for a message or a help text."""
    items = list(words)
    return " or ".join([", ".join(items[:-1]), items[-1]] if len(items) > 1 else items)


def compression_suffixes() -> list[str]:
    """Every suffix that marks a compressed file, in registry order."""
    return [suffix for comp in COMPRESSIONS for suffix in comp.suffixes]


def compression_hint() -> str:
    """The suggested suffix of each compression, as alternatives: ``.gz or .zst``."""
    return join_or(comp.suffixes[0] for comp in COMPRESSIONS)


def detect_compression(source: Path) -> str | None:
    """The name of the compression of ``source`` by its suffix, else by its magic bytes; None
    for a plain file."""
    suffix = source.suffix.lower()
    named = next((c.name for c in COMPRESSIONS if suffix in c.suffixes), None)
    if named is not None:
        return named
    with source.open("rb") as fh:
        start = fh.read(max(len(c.magic) for c in COMPRESSIONS))
    return next((c.name for c in COMPRESSIONS if start.startswith(c.magic)), None)


def _read_errors() -> tuple[type[Exception], ...]:
    """What reading a damaged file raises, whatever its compression."""
    return (OSError, EOFError, *(err for comp in COMPRESSIONS for err in comp.errors))


def chunks(source: Path, compression: str | None) -> Generator[bytes, None, None]:
    """The file's content in chunks, decompressed; read errors propagate as they are."""
    reader = next((c.chunks for c in COMPRESSIONS if c.name == compression), _plain_chunks)
    with source.open("rb") as raw:
        yield from reader(raw)


def _corrupt(name: str, compression: str | None, written: int, err: BaseException
             ) -> IngestError:
    """The one-line error for compressed data that cannot be decompressed."""
    return IngestError(f"{name}: {compression} data is corrupt or truncated after {written:,} "
                       f"bytes of output ({first_line(err)}); download or compress it again")


def head(source: Path, compression: str | None, size: int, name: str) -> tuple[bytes, bool]:
    """The first ``size`` bytes of content and whether that is all of it (cheap for any file)."""
    out = bytearray()
    stream = chunks(source, compression)
    try:
        for chunk in stream:
            out += chunk
            if len(out) > size:
                return bytes(out[:size]), False
    except _read_errors() as err:
        raise _corrupt(name, compression, len(out), err) from err
    finally:
        stream.close()
    return bytes(out), True


def decompress(source: Path, compression: str, folder: Path, limit: int, name: str,
               progress: Callable[[str, int], None]) -> Path:
    """Stream ``source`` to a temp file in ``folder``, refusing past ``limit`` bytes of output.

    Nothing beyond the limit is written; read faults become IngestError, disk faults stay
    OSError (the caller reports a full or read-only disk, not a bad file)."""
    fd, tmp = tempfile.mkstemp(prefix=".source.", suffix=".decompressed", dir=folder)
    written, stream = 0, chunks(source, compression)
    try:
        with os.fdopen(fd, "wb") as out:
            while (chunk := _next_chunk(stream, name, compression, written)) is not None:
                written += len(chunk)
                if written > limit:
                    raise IngestError(f"{name}: decompresses to more than {limit:,} bytes (the "
                                      "limit); decompress it yourself or raise the limit")
                out.write(chunk)
                progress("decompress", written)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    finally:
        stream.close()
    return Path(tmp)


def _next_chunk(stream: Iterator[bytes], name: str, compression: str, written: int
                ) -> bytes | None:
    """The next decompressed chunk (None at the end); read faults as IngestError."""
    try:
        return next(stream, None)
    except _read_errors() as err:
        raise _corrupt(name, compression, written, err) from err


def inner_suffix(name: str) -> str:
    """The suffix of ``name`` under any compression suffix (``x.csv.gz`` -> ``.csv``)."""
    path = Path(name.lower())
    return path.with_suffix("").suffix if path.suffix in compression_suffixes() else path.suffix


# --- text and values -----------------------------------------------------------------------


def sniff_delimiter(header: str) -> str:
    """The delimiter that occurs most often outside quotes in the header line."""
    return max(DELIMITERS, key=re.sub(r'"[^"]*"', "", header).count)


def to_string(col: pl.Expr, dtype: PolarsDataType) -> pl.Expr:
    """Any column as text, verbatim (structs as JSON, lists as ``[a, b]``)."""
    if dtype == pl.String:
        return col
    if isinstance(dtype, pl.Struct):
        return col.struct.json_encode()
    if isinstance(dtype, (pl.List, pl.Array)):
        inner = dtype.inner if dtype.inner is not None else pl.String
        return pl.format("[{}]", col.cast(pl.List(inner)).list.eval(
            to_string(pl.element(), inner)).list.join(", "))
    return col.cast(pl.String)


def text_lines(plain: Path) -> Iterator[str]:
    """The lines of a (decompressed) text file, undecodable bytes replaced."""
    with plain.open("r", encoding="utf-8", errors="replace", newline="") as fh:
        yield from fh


def head_lines(data: bytes, complete: bool) -> list[str]:
    """The complete lines of a head of text (a cut last line dropped), BOM removed."""
    text = data.decode("utf-8", errors="replace").removeprefix("\ufeff")
    lines = io.StringIO(text, newline="").readlines()
    return lines if complete or len(lines) < 2 else lines[:-1]


# --- faults, by line and column -------------------------------------------------------------


def check_parquet(name: str, plain: Path) -> None:
    """Refuse a Parquet file that lacks Parquet's magic bytes at both ends."""
    with plain.open("rb") as fh:
        start = fh.read(4)
        fh.seek(max(plain.stat().st_size - 4, 0))
        tail = fh.read(4)
    if start != b"PAR1" or tail != b"PAR1":
        where = "start" if start != b"PAR1" else "end (truncated?)"
        raise IngestError(f"{name}: not a valid Parquet file (no PAR1 marker at its {where}); "
                          "export it again, or give it a .csv/.ndjson name")


def _where(text: bytes, pos: int) -> str:
    """'line N, column M' of byte ``pos`` (column = delimited field, 1-based)."""
    line_start = text.rfind(b"\n", 0, pos) + 1
    header = text[: text.find(b"\n")] if b"\n" in text else text
    sep = sniff_delimiter(header.decode("utf-8", "replace")).encode()
    line, column = text.count(b"\n", 0, pos) + 1, text.count(sep, line_start, pos) + 1
    return f"line {line}, column {column}"


def encoding_fault(data: bytes, complete: bool) -> str | None:
    """UTF-16, binary (NUL), a JSON array or non-UTF-8 bytes in ``data``, located; None if fine."""
    if data[:2] in (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE) or data[1:8:2] == b"\0" * 4:
        return f"line 1: UTF-16 text; {_UNREADABLE}"
    if data.startswith(b"PK\x03\x04"):
        return f"line 1: a zip archive or spreadsheet; {_UNREADABLE}"
    if (nul := data.find(b"\0")) >= 0:
        return f"{_where(data, nul)}: a NUL byte; {_UNREADABLE}"
    if data.lstrip(b"\xef\xbb\xbf \t\r\n")[:1] == b"[":
        return f"line 1: a JSON array; {_UNREADABLE}"
    try:
        data.decode("utf-8")
    except UnicodeDecodeError as err:
        if complete or err.start < len(data) - 4:  # not a character cut by the head's end
            return (f"{_where(data, err.start)}: byte 0x{data[err.start]:02X} is not UTF-8 "
                    "(Latin-1 or another code page?); save the file as UTF-8")
    return None


def header_fault(columns: list[str], line: str) -> str | None:
    """A header that is data or uses an unsupported delimiter (a repeated name is renamed,
    ``unique_columns``)."""
    if line.lstrip().startswith("{"):
        return ("line 1 is a JSON object, not a header; give a file of one JSON object per line "
                "an .ndjson name")
    named = [c.strip() for c in columns if c.strip()]
    numbers = sum(_is_number(c) for c in named)
    if named and numbers >= max(1, len(named) // 3):
        return (f"line 1 looks like data ({', '.join(named[:3])}, ...), not a header; add a "
                "first line naming the columns")
    odd = next((s for s in _ODD_SEPARATORS if len(columns) == 1 and s in line), None)
    if odd is not None:
        return (f"line 1 is one column split by '{odd.strip() or 'spaces'}'; use comma, tab or "
                "semicolon as the delimiter")
    return None


_UNIT_TAIL = re.compile(r"\s*[(\[].*$")  # 'a (AU)' -> 'a'


def unique_columns(columns: list[str]) -> tuple[list[str], list[str]]:
    """Column names made unique, and one line per rename saying which value each belongs to.

    Real catalogues repeat uncertainty columns beside each value (``Teff,err,err,M_A,errup,
    errdn,R_A,errup,errdn``): every occurrence of a repeated name is renamed after the nearest
    column before it whose name is not repeated, less its unit (``Teff_err``, ``Teff_err_2``,
    ``M_A_errup``; ``a(AU),errup`` gives ``a_errup``);
    a repeated name with no such column before it keeps its name. Any clash left gets ``_2``,
    ``_3``..."""
    counts: dict[str, int] = {}
    for name in columns:
        counts[name] = counts.get(name, 0) + 1
    taken = {name for name in columns if counts[name] == 1}
    renamed, said, owner = [], [], None
    for number, name in enumerate(columns, start=1):
        if counts[name] == 1 or not name:
            owner = name if counts[name] == 1 else owner
            renamed.append(name)
            continue
        base = f"{_UNIT_TAIL.sub('', owner) or owner}_{name}" if owner else name
        new, extra = base, 1
        while new in taken:
            extra += 1
            new = f"{base}_{extra}"
        taken.add(new)
        renamed.append(new)
        if new != name:
            said.append(f"column {number} '{name}' (repeated) read as '{new}'")
    return renamed, said


def delimiter_fault(columns: list[str], line: str, delimiter: str) -> str | None:
    """A one-column header, in a format whose delimiter is fixed, split by another delimiter."""
    other = next((d for d in DELIMITERS if d != delimiter and d in line), None)
    if len(columns) != 1 or other is None:
        return None
    return (f"line 1 is one column split by {_DELIMITER_WORDS[other]}, not "
            f"{_DELIMITER_WORDS[delimiter]}; separate the columns by {_DELIMITER_WORDS[delimiter]} "
            "or give the file a .csv name")


def _is_number(text: str) -> bool:
    """Whether ``text`` reads as a float."""
    try:
        float(text)
    except ValueError:
        return False
    return True


def csv_fault(lines: Iterable[str], delimiter: str, complete: bool = True) -> str | None:
    """The first over-long row or quoting fault, as 'line N: ...' (short rows are allowed)."""
    reader = csv.reader(lines, delimiter=delimiter, strict=True)
    width, start = len(next(reader, [])), 2
    try:
        for row in reader:
            if len(row) > width:
                return (f"line {start}: {len(row)} fields but the header has {width}; "
                        "quote fields that contain the delimiter, or fix that row")
            start = reader.line_num + 1
    except csv.Error as err:
        if complete or "end of data" not in str(err):
            return (f"line {start}: {err} (a quote that is never closed?); "
                    "close or remove the quote in that row")
    return None


def ndjson_fault(lines: Iterable[str]) -> str | None:
    """The first line of NDJSON that is not a JSON object, as 'line N: ...'."""
    for number, line in enumerate(lines, start=1):
        if not line.strip():
            continue
        try:
            value = json.loads(line)
        except json.JSONDecodeError as err:
            return (f"line {number}: invalid JSON ({err.msg} at character {err.colno}); fix or "
                    "remove that line")
        if not isinstance(value, dict):
            return f"line {number}: not a JSON object; each line must be one {{...}} record"
    return None
