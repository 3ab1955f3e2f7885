"""A first look at an uploaded file: its columns, a few sample values and the guessed mapping.

Reads at most ``HEAD_BYTES`` of (decompressed) text, or the first rows of a Parquet file, so it
is cheap for any size and safe against decompression bombs. The dashboard uses it to decide
whether the person must confirm the mapping before the ingest starts.
"""

from __future__ import annotations

import csv
import gzip
import io
import json
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import polars as pl
import zstandard

from bodycensus.errors import BadInput, TooLarge
from bodycensus.families import guess_family
from bodycensus.schema import Mapping, guess_mapping

HEAD_BYTES = 2 << 20
SAMPLE_ROWS = 20
SAMPLES_PER_COLUMN = 5
_DELIMITERS = (",", "\t", ";")
_PARQUET = (".parquet", ".pq")


@dataclass(frozen=True)
class Sniff:
    """Columns, per-column samples, the guessed mapping and label -> family guesses."""

    columns: list[str]
    samples: dict[str, list[str]]
    mapping: Mapping
    families: dict[str, str]

    @property
    def reasons(self) -> list[str]:
        """Why the person should confirm the mapping (empty: the run can start at once)."""
        out = [f"the unit of '{c.column}' ({c.field}) is not in its header; {c.unit} assumed"
               for c in self.mapping.choices.values() if c.ambiguous]
        if "id" not in self.mapping.choices:
            out.insert(0, "no column was recognised as the body id")
        return out

    def to_json(self) -> dict[str, Any]:
        """The mapping step's proposal, as stored in the manifest and sent to the page."""
        return {"columns": self.columns, "samples": self.samples,
                "mapping": self.mapping.to_json(), "families": self.families,
                "reasons": self.reasons}


def _head(path: Path, name: str) -> bytes:
    """The first HEAD_BYTES of the file's content, decompressed if it is gzip or zstd."""
    with path.open("rb") as raw:
        magic = raw.read(4)
        raw.seek(0)
        try:
            if magic[:2] == b"\x1f\x8b":
                return gzip.GzipFile(fileobj=raw).read(HEAD_BYTES)
            if magic == b"\x28\xb5\x2f\xfd":
                return zstandard.ZstdDecompressor().stream_reader(raw).read(HEAD_BYTES)
        except (OSError, EOFError, zlib.error, zstandard.ZstdError) as err:
            raise BadInput(f"{name}: the compressed data is corrupt ({err}); compress the "
                           "file again", 422) from err
        return raw.read(HEAD_BYTES)


def _lines(head: bytes, name: str) -> list[str]:
    """Complete text lines of the head (a last partial line is dropped unless it is all)."""
    text = head.decode("utf-8", errors="replace").lstrip("\ufeff")
    lines = text.splitlines()
    if len(head) >= HEAD_BYTES and len(lines) > 1:
        lines = lines[:-1]
    elif len(head) >= HEAD_BYTES:
        raise BadInput(f"{name}: the first line is longer than {HEAD_BYTES:,} bytes; is this a "
                       "catalogue with a header row?", 422)
    return [line for line in lines if line.strip()]


def _delimited(lines: list[str]) -> tuple[list[str], list[dict[str, str]]]:
    """Header and first rows of delimited text (delimiter: the commonest in the header)."""
    delimiter = max(_DELIMITERS, key=lines[0].count)
    rows = list(csv.reader(io.StringIO("\n".join(lines[: SAMPLE_ROWS * 50 + 1])),
                           delimiter=delimiter))
    header = [h.strip() for h in rows[0]]
    return header, [dict(zip(header, r, strict=False)) for r in rows[1:]]


def _ndjson(lines: list[str], name: str) -> tuple[list[str], list[dict[str, str]]]:
    """Keys and first records of NDJSON."""
    records = []
    for number, line in enumerate(lines[: SAMPLE_ROWS * 50], start=1):
        try:
            value = json.loads(line)
        except json.JSONDecodeError as err:
            raise BadInput(f"{name}: line {number}: invalid JSON ({err.msg}); fix or remove "
                           "that line", 422) from err
        if isinstance(value, dict):
            records.append({str(k): "" if v is None else str(v) for k, v in value.items()})
    header = list(dict.fromkeys(k for r in records for k in r))
    return header, records


def _parquet(path: Path, name: str) -> tuple[list[str], list[dict[str, str]]]:
    """Columns and first rows of a Parquet file, as text."""
    try:
        frame = pl.scan_parquet(path).head(SAMPLE_ROWS * 50).collect()
    except (pl.exceptions.PolarsError, pl.exceptions.PanicException, OSError) as err:
        raise BadInput(f"{name}: not a readable Parquet file; export it again", 422) from err
    text = frame.select(pl.all().cast(pl.String, strict=False))
    return frame.columns, [{k: v or "" for k, v in r.items()} for r in text.to_dicts()]


def _table(path: Path, name: str) -> tuple[list[str], list[dict[str, str]]]:
    """Header and first rows of any supported file."""
    if path.suffix in _PARQUET:
        return _parquet(path, name)
    lines = _lines(_head(path, name), name)
    if not lines:
        raise BadInput(f"{name}: the file is empty; export the catalogue again", 422)
    if lines[0].lstrip().startswith("{"):
        return _ndjson(lines, name)
    return _delimited(lines)


def sniff(path: Path, name: str, max_columns: int) -> Sniff | None:
    """A first look at ``path``; None for a compressed Parquet file (the ingest reads it)."""
    if len(path.suffixes) > 1 and path.suffixes[-2] in _PARQUET:
        return None
    columns, rows = _table(path, name)
    if not [c for c in columns if c]:
        raise BadInput(f"{name}: no header row found; the first line must name the columns", 422)
    if len(columns) > max_columns:
        raise TooLarge(f"{name}: {len(columns):,} columns, more than the limit of "
                       f"{max_columns:,}; drop unused columns before uploading")
    if not rows:
        raise BadInput(f"{name}: no data rows after the header; add at least one body", 422)
    mapping = guess_mapping(columns)
    samples = {c: list(dict.fromkeys(v for r in rows[:SAMPLE_ROWS] if (v := r.get(c, "").strip())
                                     ))[:SAMPLES_PER_COLUMN] for c in columns}
    label = mapping.choices.get("label")
    labels = sorted({r.get(label.column, "").strip() for r in rows} - {""}) if label else []
    return Sniff(columns, samples, mapping, {lab: guess_family(lab) for lab in labels[:500]})
