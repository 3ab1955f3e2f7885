"""The input formats: one record per format, the one place that names a catalogue file format.

A record (``InputFormat``) says what people call a format, which suffixes and first bytes mark
it, and which reader reads it; a reader gives a head for the mapping step (``sniff``), checks a
file's start and scans it lazily for the ingest, and locates a fault when polars refuses it.
Sniffing, ingest, the upload box, the catalogues page, the command line and the demo discovery
iterate ``FORMATS``, so adding a format is one record there (plus a reader when none of these
fits). Compressions have their own registry in ``readers`` (``COMPRESSIONS``). Modelled on
astropy's ``io.registry``: a reader and an identifier per format.

    InputFormat(name, title, suffixes, reader, recognise=None, units=None)
    Reader: kind, head(), prepare(), scan(), fault()  ->  DelimitedText | NdjsonText | ParquetFile
"""

from __future__ import annotations

import csv
import json
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import ClassVar, Protocol

import polars as pl

from bodycensus.errors import BadInput
from bodycensus.input.astro_tables import read_frame, read_table, starts_like_fits, table_units
from bodycensus.input.readers import (
    HEAD_BYTES,
    IngestError,
    check_parquet,
    compression_hint,
    compression_suffixes,
    csv_fault,
    delimiter_fault,
    encoding_fault,
    first_line,
    head,
    head_lines,
    header_fault,
    inner_suffix,
    join_or,
    ndjson_fault,
    sniff_delimiter,
    text_lines,
    to_string,
    unique_columns,
)

ROW_INDEX = "__bodycensus_row__"  # the scans' 1-based row index column
MAGIC_BYTES = 8  # how much of a file's (decompressed) start recognises its format
_LEAD = b"\xef\xbb\xbf \t\r\n"  # a BOM and blank space before the first character
_POLARS_ERRORS = (pl.exceptions.PolarsError, pl.exceptions.PanicException, OSError)


@dataclass(frozen=True)
class Head:
    """The mapping step's look at a file: its columns and its first rows, as text."""

    columns: list[str]
    rows: list[dict[str, str]]


@dataclass(frozen=True)
class Layout:
    """What the check of a file's start found that its scan needs: the delimiter of text, and
    the header made unique (``readers.unique_columns``) with a line per renamed column."""

    delimiter: str | None = None
    columns: tuple[str, ...] | None = None  # None: the file's own names are unique
    renamed: tuple[str, ...] = ()


class Reader(Protocol):
    """How one kind of file is read; the ``*_fault`` checks of ``readers`` word its faults."""

    @property
    def kind(self) -> str:
        """What the ingest report calls the format: delimited, ndjson, parquet."""
        ...

    def head(self, path: Path, compression: str | None, name: str, rows: int) -> Head | None:
        """Columns and up to ``rows`` rows of ``path`` (compressed or not), cheap for any size;
        None when the format cannot be looked into without decompressing all of it."""
        ...

    def prepare(self, plain: Path, name: str) -> Layout:
        """Refuse (IngestError) a file whose start polars would misread; what the scan needs."""
        ...

    def scan(self, plain: Path, layout: Layout) -> pl.LazyFrame:
        """A lazy scan with the 1-based row index ``ROW_INDEX``; text formats give strings,
        typed ones (Parquet) their own types, which ``to_string`` turns into text."""
        ...

    def fault(self, plain: Path, layout: Layout) -> str | None:
        """The first fault in the whole file as 'line N: what; what to do', or None."""
        ...


@dataclass(frozen=True)
class InputFormat:
    """One input format: its name, what people call it, its suffixes (lower case, the first
    one suggested), how its first bytes are recognised when its name says nothing, its reader,
    and the units its own metadata gives each column (VOTable, FITS; None when it has none),
    which the mapping takes where a header names no unit."""

    name: str
    title: str
    suffixes: tuple[str, ...]
    reader: Reader
    recognise: Callable[[bytes], bool] | None = None
    units: Callable[[Path], dict[str, str]] | None = None


# --- readers ---------------------------------------------------------------------------------


def _text_head(path: Path, compression: str | None, name: str) -> tuple[list[str], bool]:
    """The complete, non-blank lines of a text file's head and whether that is all of it;
    refuses text we cannot read (IngestError) and an empty file (BadInput 422)."""
    data, complete = head(path, compression, HEAD_BYTES, name)
    fault = encoding_fault(data, complete)
    lines = head_lines(data, complete)
    if fault is None and not complete and len(lines) == 1 and "\n" not in lines[0]:
        fault = (f"line 1 is longer than {HEAD_BYTES:,} bytes; is this a catalogue with a "
                 "header row?")
    if fault is not None:
        raise IngestError(f"{name}: {fault}")
    lines = [line for line in lines if line.strip()]
    if not lines:
        raise BadInput(f"{name}: the file is empty; export the catalogue again", 422)
    return lines, complete


@dataclass(frozen=True)
class DelimitedText:
    """Text with a header row; the delimiter fixed, or (None) sniffed among comma, tab and
    semicolon from the header."""

    delimiter: str | None = None
    kind: ClassVar[str] = "delimited"

    def head(self, path: Path, compression: str | None, name: str, rows: int) -> Head:
        """Header and first rows; refuses a bad header, over-long rows and open quotes."""
        lines, complete = _text_head(path, compression, name)
        delimiter = self.delimiter or sniff_delimiter(lines[0])
        header = next(csv.reader(lines[:1], delimiter=delimiter))
        checked = lines[: rows + 1]
        fault = self._header_fault(header, lines[0]) or csv_fault(
            checked, delimiter, complete and len(checked) == len(lines))
        if fault is not None:
            raise IngestError(f"{name}: {fault}")
        header, _ = unique_columns([h.strip() for h in header])
        return Head(header, [dict(zip(header, r, strict=False))
                             for r in csv.reader(lines[1: rows + 1], delimiter=delimiter)])

    def prepare(self, plain: Path, name: str) -> Layout:
        """Refuse text that is not UTF-8 or whose header polars would misread; the delimiter."""
        data, complete = head(plain, None, HEAD_BYTES, name)
        fault = encoding_fault(data, complete)
        lines = head_lines(data, complete)
        delimiter = (self.delimiter or sniff_delimiter(lines[0])) if lines else None
        header = next(csv.reader(lines[:1], delimiter=delimiter)) if delimiter else []
        if fault is None and delimiter is not None:
            fault = self._header_fault(header, lines[0])
        if fault is not None:
            raise IngestError(f"{name}: {fault}")
        columns, renamed = unique_columns(header)
        return Layout(delimiter, tuple(columns) if renamed else None, tuple(renamed))

    def _header_fault(self, columns: list[str], line: str) -> str | None:
        """A header that is data, repeats a name or is split by a delimiter we do not read."""
        fixed = delimiter_fault(columns, line, self.delimiter) if self.delimiter else None
        return header_fault(columns, line) or fixed

    def scan(self, plain: Path, layout: Layout) -> pl.LazyFrame:
        """Every column as a string, undecodable bytes replaced."""
        return pl.scan_csv(plain, separator=layout.delimiter or self.delimiter or ",",
                           infer_schema=False, encoding="utf8-lossy", row_index_name=ROW_INDEX,
                           row_index_offset=1, new_columns=list(layout.columns or []) or None)

    def fault(self, plain: Path, layout: Layout) -> str | None:
        """The first over-long row or open quote in the whole file."""
        return csv_fault(text_lines(plain), layout.delimiter or self.delimiter or ",")


@dataclass(frozen=True)
class NdjsonText:
    """One JSON object per line; keys are the columns, in order of appearance."""

    kind: ClassVar[str] = "ndjson"
    infer_rows: ClassVar[int] = 10_000  # lines polars reads to learn the keys

    def head(self, path: Path, compression: str | None, name: str, rows: int) -> Head:
        """Keys and first records; refuses a line that is not a JSON object."""
        lines, _ = _text_head(path, compression, name)
        if (fault := ndjson_fault(lines)) is not None:
            raise IngestError(f"{name}: {fault}")
        records = [{str(k): "" if v is None else str(v) for k, v in json.loads(line).items()}
                   for line in lines[:rows]]
        return Head(list(dict.fromkeys(k for r in records for k in r)), records)

    def prepare(self, plain: Path, name: str) -> Layout:
        """Refuse text that is not UTF-8, a JSON array or binary data."""
        if (fault := encoding_fault(*head(plain, None, HEAD_BYTES, name))) is not None:
            raise IngestError(f"{name}: {fault}")
        return Layout()

    def scan(self, plain: Path, layout: Layout) -> pl.LazyFrame:
        """Every key as a string column."""
        names = pl.scan_ndjson(plain, infer_schema_length=self.infer_rows).collect_schema().names()
        return pl.scan_ndjson(plain, infer_schema_length=self.infer_rows,
                              row_index_name=ROW_INDEX, row_index_offset=1,
                              schema_overrides=dict.fromkeys(names, pl.String))

    def fault(self, plain: Path, layout: Layout) -> str | None:
        """The first line that is not a JSON object."""
        return ndjson_fault(text_lines(plain))


@dataclass(frozen=True)
class ParquetFile:
    """A Parquet file, columns in their own types; read from its footer, so never as a stream."""

    kind: ClassVar[str] = "parquet"

    def head(self, path: Path, compression: str | None, name: str, rows: int) -> Head | None:
        """Columns and first rows as text (nested values too); None when compressed."""
        if compression is not None:
            return None
        try:
            check_parquet(name, path)
            frame = pl.scan_parquet(path).head(rows).collect()
            text = frame.select(to_string(pl.col(c), t).alias(c) for c, t in frame.schema.items())
        except _POLARS_ERRORS as err:
            raise BadInput(f"{name}: not a readable Parquet file ({first_line(err)[:80]}); "
                           "export it again", 422) from err
        return Head(frame.columns, [{k: v or "" for k, v in r.items()} for r in text.to_dicts()])

    def prepare(self, plain: Path, name: str) -> Layout:
        """Refuse a file without Parquet's magic bytes at both ends."""
        check_parquet(name, plain)
        return Layout()

    def scan(self, plain: Path, layout: Layout) -> pl.LazyFrame:
        """The columns in their Parquet types."""
        return pl.scan_parquet(plain, row_index_name=ROW_INDEX, row_index_offset=1)

    def fault(self, plain: Path, layout: Layout) -> str | None:
        """None: polars' own message is the best we have for a damaged Parquet file."""
        return None


@dataclass(frozen=True)
class AstropyTable:
    """A VOTable (``table_kind = "votable"``) or FITS binary table (``"fits"``), read whole with
    astropy (``astro_tables``); its columns' units come from its own metadata."""

    table_kind: str
    kind: ClassVar[str] = "table"

    def head(self, path: Path, compression: str | None, name: str, rows: int) -> Head | None:
        """Columns and first rows as text; None when compressed (read whole at ingest)."""
        if compression is not None:
            return None
        frame = read_frame(path, self.table_kind, name, rows)
        text = frame.select(to_string(pl.col(c), t).alias(c) for c, t in frame.schema.items())
        return Head(frame.columns, [{k: v or "" for k, v in r.items()} for r in text.to_dicts()])

    def prepare(self, plain: Path, name: str) -> Layout:
        """Refuse a file astropy cannot read, in one line."""
        read_table(plain, self.table_kind, name)
        return Layout()

    def scan(self, plain: Path, layout: Layout) -> pl.LazyFrame:
        """The table in its own types, the 1-based row index first."""
        frame = read_frame(plain, self.table_kind, plain.name)
        return frame.with_row_index(ROW_INDEX, offset=1).lazy()

    def fault(self, plain: Path, layout: Layout) -> str | None:
        """None: astropy's own message (in ``prepare``) is the best we have."""
        return None


def _starts_with_object(start: bytes) -> bool:
    """Whether the first character (after a BOM and blank space) opens a JSON object."""
    return start.lstrip(_LEAD)[:1] == b"{"


def _starts_with_parquet_magic(start: bytes) -> bool:
    """Whether the file opens with Parquet's magic bytes."""
    return start.startswith(b"PAR1")


# --- the registry ----------------------------------------------------------------------------

DELIMITED = InputFormat("delimited", "CSV/semicolon text", (".csv", ".txt"), DelimitedText())
FORMATS: tuple[InputFormat, ...] = (
    DELIMITED,
    InputFormat("tsv", "TSV", (".tsv", ".tab"), DelimitedText(delimiter="\t")),
    InputFormat("ndjson", "NDJSON", (".ndjson", ".jsonl"), NdjsonText(),
                recognise=_starts_with_object),
    InputFormat("parquet", "Parquet", (".parquet", ".pq"), ParquetFile(),
                recognise=_starts_with_parquet_magic),
    InputFormat("votable", "VOTable", (".vot", ".votable"), AstropyTable("votable"),
                units=lambda path: table_units(path, "votable")),
    InputFormat("fits", "FITS table", (".fits", ".fit", ".fts"), AstropyTable("fits"),
                recognise=starts_like_fits, units=lambda path: table_units(path, "fits")),
)
FALLBACK = DELIMITED  # a file whose name and first bytes say nothing is read as text


def by_suffix(filename: str) -> InputFormat | None:
    """The format whose suffix ``filename`` has (under any compression suffix), or None."""
    suffix = inner_suffix(filename)
    return next((fmt for fmt in FORMATS if suffix in fmt.suffixes), None)


def by_content(start: bytes) -> InputFormat:
    """The first format that recognises these first bytes, else the text fallback."""
    return next((fmt for fmt in FORMATS if fmt.recognise is not None and fmt.recognise(start)),
                FALLBACK)


def detect_format(filename: str, start: Callable[[], bytes]) -> InputFormat:
    """By the name's suffix, else by the (decompressed) first bytes, read only when needed."""
    return by_suffix(filename) or by_content(start())


def catalogue_suffix(filename: str) -> str | None:
    """The supported suffix of ``filename`` with any compression (``.csv.gz``), or None."""
    lower = filename.lower()
    for fmt in FORMATS:
        for suffix in fmt.suffixes:
            for packed in ("", *compression_suffixes()):
                if lower.endswith(suffix + packed):
                    return suffix + packed
    return None


def suffix_hint() -> str:
    """The suffixes to suggest: ``.csv, .tsv, ... or .parquet (optionally .gz or .zst)``."""
    return (f"{join_or(fmt.suffixes[0] for fmt in FORMATS)} "
            f"(optionally {compression_hint()})")


def accepted() -> str:
    """The formats in words: ``CSV/semicolon text, TSV, ... or Parquet, optionally .gz ...``."""
    return f"{join_or(fmt.title for fmt in FORMATS)}, optionally {compression_hint()}"
