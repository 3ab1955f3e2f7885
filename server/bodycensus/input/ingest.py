"""Read a catalogue file of any size and write the normalised SI Parquet table.

A file of any registered format (``formats.FORMATS``), optionally compressed, is scanned
lazily with polars, mapped to canonical fields (``schema.guess_mapping``), converted to SI and
streamed to Parquet, so memory stays bounded however long the file is. A file that cannot be read
at all raises ``IngestError`` with one line saying where and what to do; a single unreadable cell
does not: it becomes null and is listed in ``_bad``.


``IngestError`` and the file-level checks live in ``readers`` (re-exported here); how each
format is checked, scanned and its faults located, in its record in ``formats``.
"""

from __future__ import annotations

import os
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import TypedDict

import polars as pl

from bodycensus.durable import fsync_path
from bodycensus.errors import storage_error
from bodycensus.input.astro_tables import with_metadata_units
from bodycensus.input.formats import (
    FORMATS,
    MAGIC_BYTES,
    ROW_INDEX,
    InputFormat,
    Layout,
    detect_format,
)
from bodycensus.input.hosts import (
    HostColumns,
    host_fields_text,
    host_rows,
    planets_with_hosts,
)
from bodycensus.input.readers import (
    IngestError,
    decompress,
    detect_compression,
    first_line,
    to_string,
)
from bodycensus.input.schema import (
    BOOLEAN_FIELDS,
    CANONICAL_FIELDS,
    FIELD_TYPES,
    NUMERIC_FIELDS,
    ROW_NUMBERS,
    Mapping,
    MappingRecord,
    SchemaError,
    describe_columns,
    guess_mapping,
)
from bodycensus.progress import Progress, quiet
from bodycensus.science.units import A_PRINTED, PLANET_RADII

_ROW, _PRESENT, _BAD = ROW_INDEX, "__bodycensus_present__", "__bodycensus_bad__"
_TRUE, _FALSE = ["true", "yes", "y", "t", "1", "1.0"], ["false", "no", "n", "f", "0", "0.0"]
# Words some fields use for true and false beyond the plain ones: an orbit's sense.
_WORDS: dict[str, tuple[list[str], list[str]]] = {
    "retrograde": (["retrograde", "retro"], ["prograde", "direct", "pro"]),
}


@dataclass(frozen=True)
class IngestLimits:
    """Guards against hostile or mistaken input, enforced while the file is read."""

    max_decompressed_bytes: int = 64 * 2**30
    max_rows: int = 2_000_000_000  # polars slices take at most 2**32 - 1
    max_columns: int = 100_000


class IngestRecord(TypedDict):
    """An IngestReport as JSON: a ready catalogue's ``mapping`` in its manifest, and the
    ``catalogue`` of ``bodycensus check``."""

    rows: int
    format: str
    compression: str | None
    delimiter: str | None
    columns: list[str]
    mapping: MappingRecord
    unknown_columns: list[str]
    bad_cells: dict[str, int]
    notes: list[str]


@dataclass(frozen=True)
class IngestReport:
    """What ingest found: the file's shape, the mapping used and the unreadable cells per column."""

    rows: int
    format: str  # the reader's kind: delimited | ndjson | parquet
    compression: str | None  # gzip | zstd | None
    delimiter: str | None
    columns: list[str]
    mapping: Mapping
    unknown_columns: list[str]
    bad_cells: dict[str, int]  # source column -> cells present but unreadable or non-finite
    # What the reading decided that a person should know: renamed columns, units taken as SI
    # because the header names none, null sentinels, host rows built
    notes: list[str] = field(default_factory=list)

    def to_json(self) -> IngestRecord:
        """A plain dict for the API, the manifest and `bodycensus check`."""
        return {"rows": self.rows, "format": self.format, "compression": self.compression,
                "delimiter": self.delimiter, "columns": list(self.columns),
                "mapping": self.mapping.to_json(), "unknown_columns": list(self.unknown_columns),
                "bad_cells": dict(self.bad_cells), "notes": list(self.notes)}


def _explain(source: Path, plain: Path, fmt: InputFormat, layout: Layout,
             err: Exception) -> Exception:
    """A one-line IngestError for a polars failure, located by the format's reader where it
    can (a full or read-only disk becomes the StorageError it is)."""
    if (disk := storage_error(err, retry="upload the file again")) is not None:
        return disk
    fault = fmt.reader.fault(plain, layout)
    column = re.search(r"at column '([^']+)'", str(err))
    if fault and column:
        fault = f"column '{column[1]}', {fault}"
    if fault is None:
        fault = (f"cannot be read as {fmt.reader.kind} ({first_line(err)}); check that the file "
                 f"is complete and in one of: {', '.join(f.title for f in FORMATS)}")
    return IngestError(f"{source.name}: {fault}")


def _first_bytes(plain: Path) -> bytes:
    """The start of a plain file, for recognising its format."""
    with plain.open("rb") as fh:
        return fh.read(MAGIC_BYTES)


def _clean(text: pl.Expr, nulls: tuple[str, ...] = ()) -> pl.Expr:
    """Text without surrounding whitespace; the empty string and the catalogue's null sentinels
    (``--null``) become null (absent, not bad)."""
    stripped = text.str.strip_chars()
    present = stripped != ""
    if nulls:
        present = present & ~stripped.is_in(list(nulls))
    return pl.when(present).then(stripped)


def _numeric_nulls(nulls: tuple[str, ...]) -> list[float]:
    """The null sentinels that are numbers, for columns a typed format gives as numbers."""
    found = []
    for text in nulls:
        try:
            found.append(float(text))
        except ValueError:
            continue
    return found


def _reads_text(name: str, dtype: pl.DataType) -> bool:
    """Whether field ``name`` reads a column of ``dtype`` as text (``_parse``): every column of a
    text format, and a typed column that is not the field's own kind."""
    if name in NUMERIC_FIELDS:
        return not (dtype.is_numeric() or dtype == pl.Boolean)
    return not (name in BOOLEAN_FIELDS and dtype == pl.Boolean)


_TEXT = "__bodycensus_text__"  # a source column's cleaned text (``_cleaned_text``)


def _cleaned_text(column: str, dtype: pl.DataType, nulls: tuple[str, ...]) -> pl.Expr:
    """A source column as cleaned text (``_clean``), computed once for every field that reads
    it: inside each field's expressions, polars' streaming engine stripped every cell four
    times (a third of the ingest's CPU, polars 2.1)."""
    return _clean(to_string(pl.col(column), dtype), nulls).alias(_TEXT + column)


def _parse(name: str, column: str, dtype: pl.DataType, factor: float,
           nulls: tuple[str, ...] = ()) -> tuple[pl.Expr, ...]:
    """A field's value (non-finite values kept for now) and whether its cell held anything;
    a field that reads its column as text reads its cleaned text (``_cleaned_text``)."""
    col = pl.col(column)
    if not _reads_text(name, dtype) and name in NUMERIC_FIELDS:
        numbers = _numeric_nulls(nulls)
        value = col.cast(pl.Float64)
        if numbers:
            value = pl.when(~value.is_in(numbers)).then(value)
        return value * factor, value.is_not_null()
    if not _reads_text(name, dtype):  # a boolean field from a boolean column
        return col, col.is_not_null()
    text = pl.col(_TEXT + column)
    if name in NUMERIC_FIELDS:
        return text.cast(pl.Float64, strict=False) * factor, text.is_not_null()
    if name in BOOLEAN_FIELDS:  # is_in streams; replace_strict held the whole column (polars 2.1)
        word = text.str.to_lowercase()
        yes, no = _WORDS.get(name, ([], []))
        return pl.when(word.is_in(_TRUE + yes)).then(True).when(word.is_in(_FALSE + no)) \
            .then(False), text.is_not_null()
    return text, pl.lit(False)


def _is_bad(name: str) -> pl.Expr:
    """A present cell whose value came out null or (for numbers) non-finite."""
    value = pl.col(name)
    readable = value.is_finite() if name in NUMERIC_FIELDS else value.is_not_null()
    return (pl.col(_PRESENT + name) & ~readable.fill_null(False)).alias(_BAD + name)


def _output_name(column: str) -> str:
    """An unknown column's name in the table: its own, or orig_NAME when that is taken."""
    taken = set(CANONICAL_FIELDS) | {"_row", "_bad", PLANET_RADII, A_PRINTED}
    return f"orig_{column}" if column in taken else column


def _planet_radii(mapping: Mapping) -> pl.Expr:
    """Comma-joined names of the fields mapped from a column in radii of the ring's planet
    (null when none): the values derive multiplies by that planet's radius."""
    relative = [f for f in CANONICAL_FIELDS if f in mapping.choices and mapping.choices[f].relative]
    return pl.lit(",".join(relative) if relative else None, dtype=pl.String).alias(PLANET_RADII)


def _printed_precision(mapping: Mapping, schema: pl.Schema) -> pl.Expr:
    """The relative precision of the semi-major axis as printed (``A_PRINTED``): half a unit of
    its last digit over its value, for the Kepler tolerance."""
    choice = mapping.choices.get("semi_major_axis")
    if choice is None or choice.column == ROW_NUMBERS or schema[choice.column] != pl.String:
        return pl.lit(None, dtype=pl.Float64).alias(A_PRINTED)
    text = pl.col(choice.column).str.strip_chars()
    plain = text.str.contains(r"^[+-]?\d*\.?\d+$")
    decimals = text.str.extract(r"\.(\d+)$", 1).str.len_chars().fill_null(0).cast(pl.Float64)
    number = text.cast(pl.Float64, strict=False).abs()
    precision = 0.5 * pl.lit(10.0).pow(-decimals) / number
    return pl.when(plain & (number > 0)).then(precision).alias(A_PRINTED)


def _normalise(frame: pl.LazyFrame, schema: pl.Schema, mapping: Mapping,
               nulls: tuple[str, ...] = ()) -> pl.LazyFrame:
    """The normalised table: canonical fields in SI (ring edges possibly in planet radii, as
    _planet_radii says), _row, _bad, _planet_radii, then the unknown columns.

    Four plain selects (clean, parse, flag, assemble) keep each expression small for the
    streaming engine: every cell is cleaned and parsed once."""
    parsed, mapped = [], [f for f in CANONICAL_FIELDS if f in mapping.choices]
    texts = sorted({choice.column for name in mapped
                    for choice in (mapping.choices[name], *mapping.fallbacks.get(name, []))
                    if choice.column != ROW_NUMBERS
                    and _reads_text(name, schema[choice.column])})
    for name in mapped:
        choice = mapping.choices[name]
        if choice.column == ROW_NUMBERS:  # ids made from row numbers: "row 17"
            parsed += [pl.format("row {}", pl.col(_ROW)).alias(name),
                       pl.lit(True).alias(_PRESENT + name)]
            continue
        value, present = _parse(name, choice.column, schema[choice.column],
                                choice.factor(), nulls)
        for extra in mapping.fallbacks.get(name, []):  # the same field in another unit
            more, there = _parse(name, extra.column, schema[extra.column],
                                 extra.factor(), nulls)
            value, present = pl.coalesce(value, more), present | there
        parsed += [value.cast(FIELD_TYPES[name]).alias(name), present.alias(_PRESENT + name)]
    unknown = [to_string(pl.col(c), schema[c]).alias(_output_name(c))
               for c in mapping.unknown_columns]
    flags = [pl.when(pl.col(_BAD + f)).then(pl.lit(f)) for f in mapped]
    joined = pl.concat_str(flags, separator=",", ignore_nulls=True) if flags else pl.lit("")
    fields = [pl.when(~pl.col(_BAD + f)).then(pl.col(f)).alias(f) if f in mapped
              else pl.lit(None, dtype=FIELD_TYPES[f]).alias(f) for f in CANONICAL_FIELDS]
    return (frame.with_columns(_cleaned_text(c, schema[c], nulls) for c in texts)
            .select(*parsed, pl.col(_ROW).cast(pl.Int64).alias("_row"),
                    _printed_precision(mapping, schema), *unknown)
            .with_columns(_is_bad(f) for f in mapped)
            .select(*fields, "_row", pl.when(joined != "").then(joined).cast(pl.String)
                    .alias("_bad"), _planet_radii(mapping), A_PRINTED,
                    *(_output_name(c) for c in mapping.unknown_columns)))


def _write(plan: pl.LazyFrame, dest: Path, source: Path, max_rows: int,
           explain: Callable[[Exception], Exception]) -> int:
    """Stream ``plan`` to ``dest`` atomically (temp file, fsync, rename); the number of rows.

    At most ``max_rows`` + 1 rows are read: one more than the limit proves it is exceeded."""
    tmp = dest.with_suffix(".tmp")
    try:
        plan.head(max_rows + 1).sink_parquet(tmp)
        rows = int(pl.scan_parquet(tmp).select(pl.len()).collect().item())
    except (pl.exceptions.PolarsError, pl.exceptions.PanicException, OSError) as err:
        tmp.unlink(missing_ok=True)
        raise explain(err) from err
    if rows == 0 or rows > max_rows:
        tmp.unlink(missing_ok=True)
        raise IngestError(f"{source.name}: more than {max_rows:,} rows (the limit); split the "
                          "catalogue or raise max_rows" if rows else
                          f"{source.name}: no data rows (only a header, or blank); "
                          "add at least one body to the file")
    fsync_path(tmp)
    os.replace(tmp, dest)
    fsync_path(dest.parent)
    return rows


def _count_bad(dest: Path, mapping: Mapping) -> dict[str, int]:
    """Source column -> number of its cells listed in _bad."""
    counts = (pl.scan_parquet(dest).select(pl.col("_bad").drop_nulls().str.split(",").explode())
              .group_by("_bad").len().collect())
    found = dict(zip(counts["_bad"], counts["len"], strict=True))
    return {mapping.choices[f].column: found[f] for f in CANONICAL_FIELDS if f in found}



def _map(source: Path, columns: list[str], map_overrides: dict[str, str] | None,
         unit_overrides: dict[str, str] | None, hosts: HostColumns | None = None) -> Mapping:
    """The column mapping (host columns left to the host rows, kept as unknown columns), or a
    one-line IngestError when it cannot be made."""
    host_columns = set(hosts.columns.values()) if hosts else set()
    try:
        if hosts:
            hosts.check(columns)
        mapping = guess_mapping([c for c in columns if c not in host_columns], map_overrides,
                                unit_overrides)
    except SchemaError as err:
        raise IngestError(f"{source.name}: {err}") from err
    if "id" not in mapping.choices:
        raise IngestError(f"{source.name}: no id column among {describe_columns(columns)}; "
                          "use --map id=COLUMN")
    kept = [c for c in columns if c in host_columns or c in mapping.unknown_columns]
    return Mapping(mapping.choices, kept, mapping.conflicts, mapping.fallbacks)


def unit_notes(mapping: Mapping, whose: str = "") -> list[str]:
    """One line per field read in SI because its header names no unit: the reader should know
    (a header such as 'mass' in a catalogue of planets is rarely in kilograms)."""
    return [f"{whose}{f} from '{c.column}' read in {c.unit} (SI): its header names no unit; "
            f"if it is in another, give --{'host-' if whose else ''}unit {f}=UNIT"
            for f, c in mapping.choices.items() if c.unit_source == "default" and c.ambiguous]


def _open(source: Path, plain: Path, limits: IngestLimits
          ) -> tuple[InputFormat, Layout, pl.LazyFrame, pl.Schema]:
    """Format, layout, lazy scan and schema of ``plain``, within the column limit."""
    if plain.stat().st_size == 0:
        raise IngestError(f"{source.name}: the file is empty; export the catalogue again")
    fmt = detect_format(source.name, lambda: _first_bytes(plain))
    layout = fmt.reader.prepare(plain, source.name)
    try:
        frame = fmt.reader.scan(plain, layout)
        schema = pl.Schema({n: t for n, t in frame.collect_schema().items() if n != _ROW})
    except (pl.exceptions.PolarsError, pl.exceptions.PanicException) as err:
        raise _explain(source, plain, fmt, layout, err) from err
    if len(schema) > limits.max_columns:
        raise IngestError(f"{source.name}: {len(schema):,} columns, more than the limit of "
                          f"{limits.max_columns:,}; drop unused columns or raise max_columns")
    return fmt, layout, frame, schema


def _with_hosts(plan: pl.LazyFrame, frame: pl.LazyFrame, schema: pl.Schema, mapping: Mapping,
                hosts: HostColumns, nulls: tuple[str, ...], units: dict[str, str]
                ) -> tuple[pl.LazyFrame, list[str]]:
    """The planets (parent and system their host) followed by one row per host; the notes.
    ``units``: the file's own unit of each column (VOTable, FITS), for host fields given none."""
    host_mapping = hosts.mapping(schema.names(), mapping.choices["id"].column)
    host_mapping, metadata = with_metadata_units(host_mapping, units)
    name_column = hosts.columns.get("name")
    planets = planets_with_hosts(hosts, plan, _output_name(name_column) if name_column else None)
    found = host_rows(hosts, _normalise(frame, schema, host_mapping, nulls),
                      plan.select("id").drop_nulls().unique())
    notes = [f"host rows built from the host columns: {host_fields_text(hosts)}; each planet's "
             "parent is its host"]
    if name_column is None:
        notes.append("no host name column: each planet has a host of its own ('host of <id>'); "
                     "give --host-columns name=COLUMN to put a star's planets together")
    return (pl.concat([planets, found], how="diagonal_relaxed"),
            notes + [f"host {n}" for n in metadata] + unit_notes(host_mapping, "host "))


def _read(source: Path, plain: Path, compression: str | None, dest: Path, limits: IngestLimits,
          overrides: tuple[dict[str, str] | None, dict[str, str] | None], progress: Progress,
          hosts: HostColumns | None = None, nulls: tuple[str, ...] = ()) -> IngestReport:
    """Ingest an uncompressed file ``plain`` (read from ``source``) into ``dest``."""
    fmt, layout, frame, schema = _open(source, plain, limits)
    mapping = _map(source, schema.names(), *overrides, hosts)
    metadata: list[str] = []
    units = fmt.units(plain) if fmt.units is not None else {}
    if units:
        mapping, metadata = with_metadata_units(mapping, units)
    progress("read", 0)
    plan = _normalise(frame, schema, mapping, nulls)
    notes = [f"{source.name}: {line}" for line in layout.renamed] + metadata + \
        unit_notes(mapping) + [
            f"{name} from '{mapping.choices[name].column}' ({mapping.choices[name].unit}), "
            "else from " + ", ".join(f"'{c.column}' ({c.unit})" for c in extra) +
            ": one field in two units, each row takes the first given"
            for name, extra in mapping.fallbacks.items()]
    if nulls:
        notes.append("cells reading " + ", ".join(repr(n) for n in nulls) + " taken as empty")
    if hosts:
        plan, host_notes = _with_hosts(plan, frame, schema, mapping, hosts, nulls, units)
        notes += host_notes
    rows = _write(plan, dest, source, limits.max_rows,
                  lambda err: _explain(source, plain, fmt, layout, err))
    progress("write", rows)
    return IngestReport(rows=rows, format=fmt.reader.kind, compression=compression,
                        delimiter=layout.delimiter, columns=schema.names(), mapping=mapping,
                        unknown_columns=list(mapping.unknown_columns),
                        bad_cells=_count_bad(dest, mapping), notes=notes)


def ingest(source: Path, dest: Path, *, map_overrides: dict[str, str] | None = None,
           unit_overrides: dict[str, str] | None = None, limits: IngestLimits = IngestLimits(),
           progress: Progress | None = None, hosts: HostColumns | None = None,
           nulls: tuple[str, ...] = ()) -> IngestReport:
    """Read ``source`` (any supported format) and write the normalised SI Parquet to ``dest``.

    ``progress(stage, count)`` is called for "decompress" (count = bytes written so far), "read"
    and "write" (count = rows so far). ``hosts`` builds a row per host star from host columns
    (``input.hosts``); cells reading one of ``nulls`` are empty."""
    source, dest = Path(source), Path(dest)
    notify = progress or quiet
    if not source.is_file():
        raise IngestError(f"{source}: no such file; check the path")
    dest.parent.mkdir(parents=True, exist_ok=True)
    compression = detect_compression(source)
    plain = source if compression is None else decompress(
        source, compression, dest.parent, limits.max_decompressed_bytes, source.name, notify)
    try:
        return _read(source, plain, compression, dest, limits, (map_overrides, unit_overrides),
                     notify, hosts, nulls)
    finally:
        if plain != source:
            plain.unlink(missing_ok=True)
