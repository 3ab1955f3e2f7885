"""VOTable and FITS binary tables, the formats astronomical archives serve, read with astropy.

astropy is an optional dependency (``pip install 'bodycensus[astro]'``): without it such a file
is refused in one line that says so. Each column's unit comes from the file's own metadata
(``units``), and the mapping takes it where the header names none. These formats are read
whole (astropy has no streaming reader for them): memory follows the table's size, which for the
catalogues archives serve (thousands to a few million rows) is small; convert a larger one to
Parquet first.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np
import polars as pl

from bodycensus.input.readers import IngestError, first_line
from bodycensus.input.schema import ColumnChoice, Mapping
from bodycensus.science.units import FIELD_DIMENSIONS, UNITS, find_unit

_INSTALL = "install astropy (pip install 'bodycensus[astro]') or export the table as CSV"


def read_table(path: Path, kind: str, name: str) -> Any:
    """The astropy Table of a VOTable or the first FITS table extension (read once per file
    version: the check, the scan and the units of one ingest share it)."""
    stat = path.stat()
    return _cached_table(str(path), stat.st_mtime_ns, stat.st_size, kind, name)


@lru_cache(maxsize=2)
def _cached_table(path: str, mtime: int, size: int, kind: str, name: str) -> Any:
    try:
        from astropy.table import Table  # type: ignore[import-untyped]
    except ImportError as err:
        raise IngestError(f"{name}: reading {kind} needs astropy; {_INSTALL}") from err
    try:
        if kind == "votable":
            from astropy.io.votable import parse_single_table  # type: ignore[import-untyped]
            return parse_single_table(path).to_table(use_names_over_ids=True)
        return Table.read(path, format="fits")
    except Exception as err:  # astropy raises many kinds for a damaged file
        raise IngestError(f"{name}: not a readable {kind} table ({first_line(err)[:80]}); "
                          "export it again") from err


def _series(name: str, column: Any) -> pl.Series:
    """One astropy column as a polars series: masked cells null, bytes decoded, and a column of
    arrays (one value per cell is all a catalogue field can be) as text."""
    data = np.ma.asarray(column)
    mask = np.ma.getmaskarray(data)
    values = np.ma.getdata(data)
    if values.ndim > 1:
        return pl.Series(name, [None if m.all() else str(v.tolist())
                                for v, m in zip(values, mask, strict=True)], dtype=pl.String)
    if values.dtype.kind == "S":
        values = np.char.decode(values, "utf-8", errors="replace")
    if values.dtype.kind in "OU":
        values = np.array(["" if v is None else str(v) for v in values], dtype=object)
    series = pl.Series(name, values, nan_to_null=values.dtype.kind == "f")
    return series.scatter(np.flatnonzero(mask), None) if mask.any() else series


def _frame(table: Any) -> pl.DataFrame:
    return pl.DataFrame([_series(str(n), table[n]) for n in table.colnames])


def read_frame(path: Path, kind: str, name: str, rows: int | None = None) -> pl.DataFrame:
    """The table (or its first ``rows``) as a polars frame in its own types."""
    table = read_table(path, kind, name)
    return _frame(table if rows is None else table[:rows])


def table_units(path: Path, kind: str) -> dict[str, str]:
    """Column -> the unit its metadata gives, as astropy writes it."""
    table = read_table(path, kind, path.name)
    return {str(n): str(table[n].unit) for n in table.colnames
            if getattr(table[n], "unit", None) is not None}


def starts_like_fits(start: bytes) -> bool:
    """Whether the file opens with a FITS primary header."""
    return start.startswith(b"SIMPLE  ")


# The unit astropy converts each dimension to, to compare a metadata unit with ours.
_SI = {"mass": "kg", "length": "m", "time": "s", "age": "yr", "temperature": "K",
       "power": "W", "angle": "rad", "density": "kg / m3"}


def metadata_unit(text: str, dimension: str, candidates: dict[str, float]) -> str | None:
    """Which of ``candidates`` (our unit name -> its factor to the dimension's SI unit, years
    for ages) a metadata unit such as ``jupiterMass`` or ``AU`` is: one of our own spellings,
    else by astropy's factor within 0.1 % (astropy's Jupiter mass and ours differ by ~1e-4);
    None when neither knows it or none fits."""
    ours = find_unit(text)  # our own spellings first: 'days', 'jovMass' (NASA's archive)
    if ours is not None and ours.name in candidates:
        return ours.name
    try:
        from astropy import units as u  # type: ignore[import-untyped]
        factor = float(u.Unit(text).to(u.Unit(_SI[dimension])))
    except Exception:  # an unknown or unparseable unit, or another dimension
        return None
    return next((name for name, to_si in candidates.items()
                 if abs(to_si / factor - 1.0) < 1e-3), None)


def with_metadata_units(mapping: Mapping, units: dict[str, str]) -> tuple[Mapping, list[str]]:
    """The mapping with each field whose header names no unit read in the unit the file's own
    metadata gives its column (VOTable, FITS), and a note per field so read."""
    choices, notes = dict(mapping.choices), []
    for name, choice in mapping.choices.items():
        dimension = FIELD_DIMENSIONS.get(name)
        text = units.get(choice.column)
        if choice.unit_source not in ("default", "value") or not text or dimension is None:
            continue
        candidates = {u.name: u.to_si for u in UNITS.values()
                      if u.dimension == dimension and not u.relative}
        found = metadata_unit(text, dimension, candidates)
        if found is None:
            notes.append(f"{name} from '{choice.column}': its metadata unit '{text}' is not one "
                         f"of ours; read in {choice.unit}, or give --unit {name}=UNIT")
            continue
        choices[name] = ColumnChoice(name, choice.column, found, "header", False)
        notes.append(f"{name} from '{choice.column}' in {found} (the file's metadata: '{text}')")
    return Mapping(choices, mapping.unknown_columns, mapping.conflicts, mapping.fallbacks), notes
