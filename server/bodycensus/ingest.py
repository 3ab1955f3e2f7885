"""Read a catalogue file of any size and write the normalised SI Parquet table.

Delimited text (comma, tab, semicolon), NDJSON or Parquet, optionally gzip or zstd, is scanned
lazily with polars, mapped to canonical fields (``schema.guess_mapping``), converted to SI and
streamed to Parquet, so memory stays bounded however long the file is. A file that cannot be read
at all raises ``IngestError`` with one line saying where and what to do; a single unreadable cell
does not: it becomes null and is listed in ``_bad``.
"""

from __future__ import annotations

import csv
import gzip
import json
import os
import re
import tempfile
import zlib
from collections.abc import Callable, Iterator
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import BinaryIO

import polars as pl
import zstandard

from bodycensus.schema import (
    CANONICAL_FIELDS,
    FIELD_TYPES,
    NUMERIC_FIELDS,
    Mapping,
    SchemaError,
    describe_columns,
    guess_mapping,
)

Progress = Callable[[str, int], None]
_ROW, _PRESENT, _BAD = "__bodycensus_row__", "__bodycensus_present__", "__bodycensus_bad__"
_CHUNK = 1 << 20
_DELIMITERS = (",", "\t", ";")
_TRUE, _FALSE = ["true", "yes", "y", "t", "1", "1.0"], ["false", "no", "n", "f", "0", "0.0"]
_EXTENSIONS = {
    ".csv": "delimited", ".tsv": "delimited", ".tab": "delimited", ".txt": "delimited",
    ".ndjson": "ndjson", ".jsonl": "ndjson", ".parquet": "parquet", ".pq": "parquet",
}
_MAGIC = {b"\x1f\x8b": "gzip", b"\x28\xb5\x2f\xfd": "zstd"}
_COMPRESSIONS = {".gz": "gzip", ".gzip": "gzip", ".zst": "zstd", ".zstd": "zstd"}


class IngestError(ValueError):
    """A file that cannot be read at all; the message is one line: where, what, and what to do."""


@dataclass(frozen=True)
class IngestLimits:
    """Guards against hostile or mistaken input."""

    max_decompressed_bytes: int = 64 * 2**30


@dataclass(frozen=True)
class IngestReport:
    """What ingest found: the file's shape, the mapping used and the unreadable cells per column."""

    rows: int
    format: str  # delimited | ndjson | parquet
    compression: str | None  # gzip | zstd | None
    delimiter: str | None
    columns: list[str]
    mapping: Mapping
    unknown_columns: list[str]
    bad_cells: dict[str, int]  # source column -> cells present but unreadable or non-finite

    def to_json(self) -> dict:
        """A plain dict for the API, the manifest and `bodycensus check`."""
        return {**asdict(self), "mapping": self.mapping.to_json()}


def _detect_compression(source: Path) -> str | None:
    """gzip or zstd by extension, else by magic bytes; None for a plain file."""
    if source.suffix.lower() in _COMPRESSIONS:
        return _COMPRESSIONS[source.suffix.lower()]
    with source.open("rb") as fh:
        magic = fh.read(4)
    return next((name for start, name in _MAGIC.items() if magic.startswith(start)), None)


def _zstd_chunks(fh: BinaryIO) -> Iterator[bytes]:
    """Decompressed chunks of a (possibly multi-frame) zstd stream; raises if it is truncated."""
    decoder, pending = zstandard.ZstdDecompressor().decompressobj(), False
    while chunk := fh.read(_CHUNK):
        while chunk:
            yield decoder.decompress(chunk)
            pending, chunk = not decoder.eof, b""
            if decoder.eof:  # the next frame, if any, starts in the unused bytes
                chunk, decoder = decoder.unused_data, zstandard.ZstdDecompressor().decompressobj()
    if pending:
        raise EOFError("the stream ends inside a frame")


def _chunks(source: Path, compression: str) -> Iterator[bytes]:
    """Decompressed chunks of ``source``."""
    with source.open("rb") as raw:
        if compression == "zstd":
            yield from _zstd_chunks(raw)
            return
        with gzip.GzipFile(fileobj=raw) as fh:
            yield from iter(lambda: fh.read(_CHUNK), b"")


def _decompress(source: Path, compression: str, dest: Path, limits: IngestLimits,
                progress: Progress) -> Path:
    """Stream ``source`` to a temp file beside ``dest``; the progress count is bytes written."""
    fd, name = tempfile.mkstemp(prefix=f".{dest.name}.", suffix=".decompressed", dir=dest.parent)
    written, limit = 0, limits.max_decompressed_bytes
    try:
        with os.fdopen(fd, "wb") as out:
            for chunk in _chunks(source, compression):
                written += len(chunk)
                if written > limit:
                    raise IngestError(f"{source.name}: decompresses to more than {limit:,} bytes "
                                      "(the limit); decompress it yourself or raise the limit")
                out.write(chunk)
                progress("decompress", written)
    except BaseException as err:
        Path(name).unlink(missing_ok=True)
        if isinstance(err, (OSError, EOFError, zlib.error, zstandard.ZstdError)):
            raise IngestError(
                f"{source.name}: {compression} data is corrupt or truncated after {written:,} "
                f"bytes of output ({_first_line(err)}); download or compress it again") from err
        raise
    return Path(name)


def _first_line(err: BaseException) -> str:
    """The first line of an exception's message (polars messages run to many lines)."""
    return (str(err).strip() or type(err).__name__).splitlines()[0]


def _detect_format(source: Path, plain: Path) -> str:
    """delimited, ndjson or parquet: by extension (under any .gz/.zst), then by content."""
    inner = source.with_suffix("") if source.suffix.lower() in _COMPRESSIONS else source
    with plain.open("rb") as fh:
        head = fh.read(4096)
    start = head.lstrip(b"\xef\xbb\xbf \t\r\n")[:1]
    fmt = _EXTENSIONS.get(inner.suffix.lower()) or (
        "parquet" if head.startswith(b"PAR1") else "ndjson" if start == b"{" else "delimited")
    if fmt != "parquet" and (b"\x00" in head or start == b"["):
        raise IngestError(f"{source.name}: binary data, UTF-16 text or a JSON array; export it as "
                          "UTF-8 CSV/TSV, NDJSON (one object per line) or Parquet")
    return fmt


def _sniff_delimiter(plain: Path) -> str:
    """The delimiter that occurs most often outside quotes in the header line."""
    with plain.open("r", encoding="utf-8", errors="replace", newline="") as fh:
        header = fh.readline()
    return max(_DELIMITERS, key=re.sub(r'"[^"]*"', "", header).count)


def _check_parquet(source: Path, plain: Path) -> None:
    """Refuse a .parquet file that lacks Parquet's magic bytes at both ends."""
    with plain.open("rb") as fh:
        head = fh.read(4)
        fh.seek(max(plain.stat().st_size - 4, 0))
        tail = fh.read(4)
    if head != b"PAR1" or tail != b"PAR1":
        where = "start" if head != b"PAR1" else "end (truncated?)"
        raise IngestError(f"{source.name}: not a valid Parquet file (no PAR1 marker at its "
                          f"{where}); export it again, or give it a .csv/.ndjson name")


def _scan(plain: Path, fmt: str, delimiter: str | None) -> pl.LazyFrame:
    """A lazy scan with a 1-based row index; text formats read every column as a string."""
    if fmt == "parquet":
        return pl.scan_parquet(plain, row_index_name=_ROW, row_index_offset=1)
    if fmt == "ndjson":
        names = pl.scan_ndjson(plain, infer_schema_length=10_000).collect_schema().names()
        return pl.scan_ndjson(plain, infer_schema_length=10_000, row_index_name=_ROW,
                              row_index_offset=1, schema_overrides=dict.fromkeys(names, pl.String))
    return pl.scan_csv(plain, separator=delimiter or ",", infer_schema=False,
                       encoding="utf8-lossy", row_index_name=_ROW, row_index_offset=1)


def _csv_fault(plain: Path, delimiter: str) -> str | None:
    """The first ragged row or quoting fault, as 'line N: ...', found with the csv module."""
    with plain.open("r", encoding="utf-8", errors="replace", newline="") as fh:
        reader = csv.reader(fh, delimiter=delimiter, strict=True)
        width, start = len(next(reader, [])), 2
        try:
            for row in reader:
                if len(row) > width:
                    return (f"line {start}: {len(row)} fields but the header has {width}; "
                            "quote fields that contain the delimiter, or fix that row")
                start = reader.line_num + 1
        except csv.Error as err:
            return (f"line {start}: {err} (a quote that is never closed?); "
                    "close or remove the quote in that row")
    return None


def _ndjson_fault(plain: Path) -> str | None:
    """The first line of an NDJSON file that is not a JSON object, as 'line N: ...'."""
    with plain.open("r", encoding="utf-8", errors="replace") as fh:
        for number, line in enumerate(fh, start=1):
            if not line.strip():
                continue
            try:
                value = json.loads(line)
            except json.JSONDecodeError as err:
                return f"line {number}: invalid JSON ({err.msg} at character {err.colno}); " \
                    "fix or remove that line"
            if not isinstance(value, dict):
                return f"line {number}: not a JSON object; each line must be one {{...}} record"
    return None


def _explain(source: Path, plain: Path, fmt: str, delimiter: str | None,
             err: Exception) -> IngestError:
    """A one-line IngestError for a polars failure, locating the fault where we can."""
    fault = None
    if fmt == "delimited":
        fault = _csv_fault(plain, delimiter or ",")
    elif fmt == "ndjson":
        fault = _ndjson_fault(plain)
    column = re.search(r"at column '([^']+)'", str(err))
    if fault and column:
        fault = f"column '{column[1]}', {fault}"
    if fault is None:
        fault = (f"cannot be read as {fmt} ({_first_line(err)}); check that the file is "
                 "complete and in one of: CSV/TSV/semicolon text, NDJSON, Parquet")
    return IngestError(f"{source.name}: {fault}")


def _to_string(col: pl.Expr, dtype: pl.DataType) -> pl.Expr:
    """Any column as text, verbatim (structs and lists as JSON-like text)."""
    if dtype == pl.String:
        return col
    if isinstance(dtype, pl.Struct):
        return col.struct.json_encode()
    if isinstance(dtype, (pl.List, pl.Array)):
        return pl.format("[{}]", col.cast(pl.List(pl.String)).list.join(", "))
    return col.cast(pl.String)


def _clean(text: pl.Expr) -> pl.Expr:
    """Text without surrounding whitespace; the empty string becomes null (absent, not bad)."""
    stripped = text.str.strip_chars()
    return pl.when(stripped != "").then(stripped)


def _parse(name: str, col: pl.Expr, dtype: pl.DataType, factor: float) -> tuple[pl.Expr, ...]:
    """A field's value (non-finite values kept for now) and whether its cell held anything."""
    if name in NUMERIC_FIELDS and (dtype.is_numeric() or dtype == pl.Boolean):
        return col.cast(pl.Float64) * factor, col.is_not_null()
    if name == "tidally_locked" and dtype == pl.Boolean:
        return col, col.is_not_null()
    text = _clean(_to_string(col, dtype))
    if name in NUMERIC_FIELDS:
        return text.cast(pl.Float64, strict=False) * factor, text.is_not_null()
    if name == "tidally_locked":  # is_in streams; replace_strict held the whole column (polars 2.1)
        word = text.str.to_lowercase()
        return pl.when(word.is_in(_TRUE)).then(True).when(word.is_in(_FALSE)).then(False), \
            text.is_not_null()
    return text, pl.lit(False)


def _is_bad(name: str) -> pl.Expr:
    """A present cell whose value came out null or (for numbers) non-finite."""
    value = pl.col(name)
    readable = value.is_finite() if name in NUMERIC_FIELDS else value.is_not_null()
    return (pl.col(_PRESENT + name) & ~readable.fill_null(False)).alias(_BAD + name)


def _output_name(column: str) -> str:
    """An unknown column's name in the table: its own, or orig_NAME when that is taken."""
    taken = set(CANONICAL_FIELDS) | {"_row", "_bad"}
    return f"orig_{column}" if column in taken else column


def _normalise(frame: pl.LazyFrame, schema: pl.Schema, mapping: Mapping) -> pl.LazyFrame:
    """The normalised table: canonical fields in SI, _row, _bad, then the unknown columns.

    Three plain selects (parse, flag, assemble) keep each expression small for the streaming
    engine: every cell is parsed once."""
    parsed, mapped = [], [f for f in CANONICAL_FIELDS if f in mapping.choices]
    for name in mapped:
        choice = mapping.choices[name]
        value, present = _parse(name, pl.col(choice.column), schema[choice.column],
                                choice.factor())
        parsed += [value.cast(FIELD_TYPES[name]).alias(name), present.alias(_PRESENT + name)]
    unknown = [_to_string(pl.col(c), schema[c]).alias(_output_name(c))
               for c in mapping.unknown_columns]
    flags = [pl.when(pl.col(_BAD + f)).then(pl.lit(f)) for f in mapped]
    joined = pl.concat_str(flags, separator=",", ignore_nulls=True) if flags else pl.lit("")
    fields = [pl.when(~pl.col(_BAD + f)).then(pl.col(f)).alias(f) if f in mapped
              else pl.lit(None, dtype=FIELD_TYPES[f]).alias(f) for f in CANONICAL_FIELDS]
    return (frame.select(*parsed, pl.col(_ROW).cast(pl.Int64).alias("_row"), *unknown)
            .with_columns(_is_bad(f) for f in mapped)
            .select(*fields, "_row", pl.when(joined != "").then(joined).cast(pl.String)
                    .alias("_bad"), *(_output_name(c) for c in mapping.unknown_columns)))


def _fsync(path: Path) -> None:
    """Flush a file (or directory) to disk."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _write(plan: pl.LazyFrame, dest: Path, source: Path,
           explain: Callable[[Exception], IngestError]) -> int:
    """Stream ``plan`` to ``dest`` atomically (temp file, fsync, rename); the number of rows."""
    tmp = dest.with_suffix(".tmp")
    try:
        plan.sink_parquet(tmp)
        rows = pl.scan_parquet(tmp).select(pl.len()).collect().item()
    except (pl.exceptions.PolarsError, pl.exceptions.PanicException) as err:
        tmp.unlink(missing_ok=True)
        raise explain(err) from err
    if rows == 0:
        tmp.unlink(missing_ok=True)
        raise IngestError(f"{source.name}: no data rows (only a header, or blank); "
                          "add at least one body to the file")
    _fsync(tmp)
    os.replace(tmp, dest)
    _fsync(dest.parent)
    return rows


def _count_bad(dest: Path, mapping: Mapping) -> dict[str, int]:
    """Source column -> number of its cells listed in _bad."""
    counts = (pl.scan_parquet(dest).select(pl.col("_bad").drop_nulls().str.split(",").explode())
              .group_by("_bad").len().collect())
    found = dict(zip(counts["_bad"], counts["len"], strict=True))
    return {mapping.choices[f].column: found[f] for f in CANONICAL_FIELDS if f in found}


def _map(source: Path, columns: list[str], map_overrides: dict[str, str] | None,
         unit_overrides: dict[str, str] | None) -> Mapping:
    """The column mapping, or a one-line IngestError when it cannot be made."""
    try:
        mapping = guess_mapping(columns, map_overrides, unit_overrides)
    except SchemaError as err:
        raise IngestError(f"{source.name}: {err}") from err
    if "id" not in mapping.choices:
        raise IngestError(f"{source.name}: no id column among {describe_columns(columns)}; "
                          "use --map id=COLUMN")
    return mapping


def _read(source: Path, plain: Path, compression: str | None, dest: Path,
          overrides: tuple[dict | None, dict | None], progress: Progress) -> IngestReport:
    """Ingest an uncompressed file ``plain`` (read from ``source``) into ``dest``."""
    if plain.stat().st_size == 0:
        raise IngestError(f"{source.name}: the file is empty; export the catalogue again")
    fmt = _detect_format(source, plain)
    if fmt == "parquet":
        _check_parquet(source, plain)
    delimiter = _sniff_delimiter(plain) if fmt == "delimited" else None
    try:
        frame = _scan(plain, fmt, delimiter)
        schema = pl.Schema({n: t for n, t in frame.collect_schema().items() if n != _ROW})
    except (pl.exceptions.PolarsError, pl.exceptions.PanicException) as err:
        raise _explain(source, plain, fmt, delimiter, err) from err
    mapping = _map(source, schema.names(), *overrides)
    progress("read", 0)
    plan = _normalise(frame, schema, mapping)
    rows = _write(plan, dest, source, lambda err: _explain(source, plain, fmt, delimiter, err))
    progress("write", rows)
    return IngestReport(rows=rows, format=fmt, compression=compression, delimiter=delimiter,
                        columns=schema.names(), mapping=mapping,
                        unknown_columns=list(mapping.unknown_columns),
                        bad_cells=_count_bad(dest, mapping))


def ingest(source: Path, dest: Path, *, map_overrides: dict[str, str] | None = None,
           unit_overrides: dict[str, str] | None = None, limits: IngestLimits = IngestLimits(),
           progress: Progress | None = None) -> IngestReport:
    """Read ``source`` (any supported format) and write the normalised SI Parquet to ``dest``.

    ``progress(stage, count)`` is called for "decompress" (count = bytes written so far), "read"
    and "write" (count = rows so far)."""
    source, dest = Path(source), Path(dest)
    notify = progress or (lambda stage, count: None)
    if not source.is_file():
        raise IngestError(f"{source}: no such file; check the path")
    dest.parent.mkdir(parents=True, exist_ok=True)
    compression = _detect_compression(source)
    plain = source if compression is None else _decompress(source, compression, dest, limits,
                                                           notify)
    try:
        return _read(source, plain, compression, dest, (map_overrides, unit_overrides), notify)
    finally:
        if plain != source:
            plain.unlink(missing_ok=True)
