"""A first look at an uploaded file: its columns, a few sample values and the guessed mapping.

Reads at most ``HEAD_BYTES`` of (decompressed) text, or the first rows of a Parquet file, so it
is cheap for any size and safe against decompression bombs. A fault found there (bad encoding,
a header that is data, an over-long row, an open quote, a broken NDJSON line) refuses the upload
with the line and column; ``readers`` holds the checks, shared with the ingest. The dashboard
uses it to decide whether the person must confirm the mapping before the ingest starts.
"""

from __future__ import annotations

import csv
import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import polars as pl

from bodycensus.errors import BadInput, TooLarge
from bodycensus.input.readers import (
    HEAD_BYTES,
    IngestError,
    check_parquet,
    csv_fault,
    detect_compression,
    detect_format,
    encoding_fault,
    first_line,
    head,
    head_lines,
    header_fault,
    ndjson_fault,
    sniff_delimiter,
    to_string,
)
from bodycensus.input.schema import Mapping, guess_mapping
from bodycensus.science.families import guess_family

SAMPLE_ROWS = 20
SAMPLES_PER_COLUMN = 5
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


def _lines(path: Path, name: str) -> tuple[list[str], bool]:
    """The complete, non-blank lines of the head; IngestError (422) for text we cannot read."""
    data, complete = head(path, detect_compression(path), HEAD_BYTES, name)
    fault = encoding_fault(data, complete)
    lines = head_lines(data, complete)
    if fault is None and not complete and len(lines) == 1 and "\n" not in lines[0]:
        fault = (f"line 1 is longer than {HEAD_BYTES:,} bytes; is this a catalogue with a "
                 "header row?")
    if fault is not None:
        raise IngestError(f"{name}: {fault}")
    return [line for line in lines if line.strip()], complete


def _delimited(lines: list[str], complete: bool, name: str
               ) -> tuple[list[str], list[dict[str, str]]]:
    """Header and first rows of delimited text; refuses a bad header, long rows, open quotes."""
    delimiter = sniff_delimiter(lines[0])
    header = next(csv.reader(lines[:1], delimiter=delimiter))
    checked = lines[: SAMPLE_ROWS * 50 + 1]  # the rows the first look samples
    fault = header_fault(header, lines[0]) or csv_fault(
        checked, delimiter, complete and len(checked) == len(lines))
    if fault is not None:
        raise IngestError(f"{name}: {fault}")
    rows = list(csv.reader(lines[1: SAMPLE_ROWS * 50 + 1], delimiter=delimiter))
    header = [h.strip() for h in header]
    return header, [dict(zip(header, r, strict=False)) for r in rows]


def _ndjson(lines: list[str], name: str) -> tuple[list[str], list[dict[str, str]]]:
    """Keys and first records of NDJSON; refuses a line that is not a JSON object."""
    if (fault := ndjson_fault(lines)) is not None:
        raise IngestError(f"{name}: {fault}")
    records = [{str(k): "" if v is None else str(v) for k, v in json.loads(line).items()}
               for line in lines[: SAMPLE_ROWS * 50]]
    header = list(dict.fromkeys(k for r in records for k in r))
    return header, records


def _parquet(path: Path, name: str) -> tuple[list[str], list[dict[str, str]]]:
    """Columns and first rows of a Parquet file, as text (nested values too)."""
    try:
        check_parquet(name, path)
        frame = pl.scan_parquet(path).head(SAMPLE_ROWS * 50).collect()
        text = frame.select(to_string(pl.col(c), t).alias(c) for c, t in frame.schema.items())
    except (pl.exceptions.PolarsError, pl.exceptions.PanicException, OSError) as err:
        raise BadInput(f"{name}: not a readable Parquet file ({first_line(err)[:80]}); export "
                       "it again", 422) from err
    return frame.columns, [{k: v or "" for k, v in r.items()} for r in text.to_dicts()]


def _table(path: Path, name: str) -> tuple[list[str], list[dict[str, str]]]:
    """Header and first rows of any supported file."""
    with path.open("rb") as fh:
        fmt = detect_format(path.name, fh.read(8))
    if fmt == "parquet":
        return _parquet(path, name)
    lines, complete = _lines(path, name)
    if not lines:
        raise BadInput(f"{name}: the file is empty; export the catalogue again", 422)
    if fmt == "ndjson" or lines[0].lstrip().startswith("{"):
        return _ndjson(lines, name)
    return _delimited(lines, complete, name)


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
