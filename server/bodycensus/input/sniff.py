"""A first look at an uploaded file: its columns, a few sample values and the guessed mapping.

Reads at most ``HEAD_BYTES`` of (decompressed) text, or the first rows of a Parquet file, so it
is cheap for any size and safe against decompression bombs. A fault found there (bad encoding,
a header that is data, an over-long row, an open quote, a broken NDJSON line) refuses the upload
with the line and column; the format's reader (``formats``) takes that look with the checks of
``readers``, shared with the ingest. The dashboard uses it to decide whether the person must
confirm the mapping before the ingest starts.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TypedDict

from bodycensus.errors import BadInput, TooLarge
from bodycensus.input.formats import MAGIC_BYTES, detect_format
from bodycensus.input.readers import detect_compression, head
from bodycensus.input.schema import (
    NUMERIC_FIELDS,
    Mapping,
    MappingRecord,
    guess_mapping,
    physical_fields,
)
from bodycensus.science.families import guess_family

SAMPLE_ROWS = 20
SAMPLES_PER_COLUMN = 5
HEAD_ROWS = SAMPLE_ROWS * 50  # rows read (and checked) for the samples and the labels


class ProposalRecord(TypedDict):
    """A Sniff as JSON: the mapping step's proposal, kept in the manifest while it waits."""

    columns: list[str]
    samples: dict[str, list[str]]  # column -> a few of its values
    mapping: MappingRecord  # the guess
    families: dict[str, str]  # label -> guessed family
    reasons: list[str]  # why the person should confirm it (empty: the run starts at once)


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
        if not physical_fields(self.mapping):
            out.insert(0, "no column was recognised as a physical field; choose what the "
                          "numeric columns hold")
        if "id" not in self.mapping.choices:
            out.insert(0, "no column was recognised as the body id; choose it, or number the "
                          "rows")
        return out

    def to_json(self) -> ProposalRecord:
        """The mapping step's proposal, as stored in the manifest and sent to the page."""
        return {"columns": self.columns, "samples": self.samples,
                "mapping": self.mapping.to_json(), "families": self.families,
                "reasons": self.reasons}


def _numeric(values: list[str]) -> bool:
    """Whether a column's sample values are numbers (so it could be mapped to a quantity)."""
    def number(text: str) -> bool:
        try:
            float(text)
        except ValueError:
            return False
        return True
    return bool(values) and all(number(v) for v in values)


def sniff(path: Path, name: str, max_columns: int) -> Sniff | None:
    """A first look at ``path``; None for a format that cannot be looked into without
    decompressing it whole (a compressed Parquet file: the ingest reads it)."""
    compression = detect_compression(path)
    fmt = detect_format(path.name, lambda: head(path, compression, MAGIC_BYTES, name)[0])
    table = fmt.reader.head(path, compression, name, HEAD_ROWS)
    if table is None:
        return None
    columns, rows = table.columns, table.rows
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
    if not physical_fields(mapping) and not any(_numeric(v) for v in samples.values()):
        fields = ", ".join(f.replace("_", " ") for f in NUMERIC_FIELDS[:4])
        raise BadInput(f"{name}: no column holds a physical quantity ({fields}, ...): nothing to "
                       "check; upload a table of bodies with at least a mass or a radius column",
                       422)
    label = mapping.choices.get("label")
    labels = sorted({r.get(label.column, "").strip() for r in rows} - {""}) if label else []
    return Sniff(columns, samples, mapping, {lab: guess_family(lab) for lab in labels[:500]})
