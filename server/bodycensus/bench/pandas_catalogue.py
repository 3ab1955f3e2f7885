"""A demo catalogue read with pandas alone, into SI units, as the engine's ingest reads it: the
pandas reference's first step (``bench.pandas_reference``).

Only the demo's own header is read (``bodycensus demo`` writes it; ``DEMO_COLUMNS``), so the
column mapping and units are this module's table, not the engine's header guessing. The rules of
reading are the ingest's: surrounding blanks are dropped and an empty cell is absent; a number
that cannot be read, or that is not finite once in SI, is absent and its field is named in
``_bad``; true/false words (and prograde/retrograde) become flags. Written for pandas, plainly:
one ``read_csv`` (pandas parses the clean number columns itself), then one vectorised
conversion per column.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from bodycensus.errors import InputError
from bodycensus.science.units import UNITS

# The demo header -> (field, unit of the column). Text columns have no unit.
TEXT_COLUMNS = {"id": "id", "name": "name", "type": "label", "orbits": "parent",
                "system": "system"}
NUMBER_COLUMNS = {
    "mass (earth_mass)": ("mass", "earth_mass"),
    "radius_km": ("radius", "km"),
    "a (au)": ("semi_major_axis", "au"),
    "e": ("eccentricity", "1"),
    "period_days": ("period", "d"),
    "rotation_h": ("rotation_period", "h"),
    "age_gyr": ("age", "Gyr"),
    "temp_k": ("temperature", "K"),
    "luminosity (L_sun)": ("luminosity", "solar_luminosity"),
    "ring inner [R_planet]": ("ring_inner", "planet_radius"),  # radii of the ring's planet
    "ring outer [R_planet]": ("ring_outer", "planet_radius"),
    "ring density (kg/m3)": ("ring_density", "kg/m3"),
    "mass error (earth_mass)": ("mass_error", "earth_mass"),
}
FLAG_COLUMNS = {"locked": "tidally_locked", "orbit_sense": "retrograde"}
DEMO_COLUMNS = ("id", "name", "type", "orbits", "system", "mass (earth_mass)", "radius_km",
                "a (au)", "e", "period_days", "rotation_h", "locked", "age_gyr", "temp_k",
                "luminosity (L_sun)", "orbit_sense", "ring inner [R_planet]",
                "ring outer [R_planet]", "ring density (kg/m3)", "mass error (earth_mass)")
# The order fields are named in ``_bad`` (the normalised table's field order).
_FIELD_ORDER = ("id", "name", "label", "parent", "system", "mass", "radius", "semi_major_axis",
                "eccentricity", "period", "rotation_period", "tidally_locked", "age",
                "temperature", "luminosity", "retrograde", "ring_inner", "ring_outer",
                "ring_density", "mass_error")
# Words for true and false (and an orbit's sense), lower-cased.
_YES = ("true", "yes", "y", "t", "1", "1.0")
_NO = ("false", "no", "n", "f", "0", "0.0")
_FLAG_WORDS = {"tidally_locked": (_YES, _NO),
               "retrograde": (_YES + ("retrograde", "retro"), _NO + ("prograde", "direct", "pro"))}
# Not given by the demo: absent on every row.
ABSENT_FIELDS = ("inclination", "ring_mass", "mass_error_low", "radius_error", "radius_error_low",
                 "semi_major_axis_error", "semi_major_axis_error_low", "period_error",
                 "period_error_low")
_PLAIN_NUMBER = r"[+-]?\d*\.?\d+"


def _printed_precision(text: pd.Series) -> pd.Series:
    """Half a unit of the last printed digit of the semi-major axis over its value (null for a
    number written with an exponent): the Kepler tolerance of an axis without uncertainty."""
    plain = text.fillna("").str.fullmatch(_PLAIN_NUMBER).astype(bool)
    decimals = text.str.extract(r"\.(\d+)$", expand=False).str.len().fillna(0).astype(float)
    number = pd.to_numeric(text, errors="coerce").abs()
    precision = 0.5 * np.power(10.0, -decimals) / number
    return precision.where(plain & (number > 0))


def _flag(text: pd.Series, field: str) -> pd.Series:
    """True, false or absent from words."""
    yes, no = _FLAG_WORDS[field]
    word = text.str.lower()
    flag = pd.Series(pd.NA, index=text.index, dtype="boolean")
    flag[word.isin(yes)] = True
    flag[word.isin(no)] = False
    return flag


def _bad_names(bad: pd.DataFrame) -> pd.Series:
    """Comma-joined names of each row's bad fields, in field order; absent where none."""
    rows = bad[bad.any(axis=1)]
    names = pd.Series("", index=rows.index, dtype=object)
    for field in rows.columns:
        names = names + np.where(rows[field], field + ",", "")
    return names.str.rstrip(",").reindex(bad.index)


def _text(column: pd.Series) -> pd.Series:
    """Words without surrounding blanks; an empty cell is absent."""
    stripped = column.str.strip()
    return stripped.where(stripped != "")


def _number(column: pd.Series) -> tuple[pd.Series, pd.Series]:
    """A number column's values (NaN where unreadable) and whether each cell held anything.
    ``read_csv`` parses a column of clean numbers itself; a column holding some text comes as
    text and is read again here, cell by cell, vectorised."""
    if pd.api.types.is_numeric_dtype(column):
        return column.astype(float), column.notna()
    text = _text(column)
    return pd.to_numeric(text, errors="coerce"), text.notna()


def read_catalogue(csv: Path) -> pd.DataFrame:
    """The demo catalogue ``csv`` as a frame of canonical fields in SI (ring edges in radii of
    their planet, ages in years), ``_row`` (1-based data row), ``_bad`` and ``_a_printed``."""
    words = [*TEXT_COLUMNS, *FLAG_COLUMNS, "a (au)"]  # the axis as printed, for its precision
    # only an empty cell is absent: "n/a" and the like are unreadable numbers, said in _bad
    raw = pd.read_csv(csv, keep_default_na=False, na_values=[""], dtype=dict.fromkeys(words, str),
                      low_memory=False)  # one type per column, however long the file
    if tuple(raw.columns) != DEMO_COLUMNS:
        raise InputError(f"{Path(csv).name}: not a demo catalogue (its header differs from "
                         "`bodycensus demo`'s); the pandas reference reads only demo files")
    table = pd.DataFrame({field: _text(raw[column]) for column, field in TEXT_COLUMNS.items()})
    bad = pd.DataFrame(False, index=raw.index, columns=list(_FIELD_ORDER))
    for column, (field, unit) in NUMBER_COLUMNS.items():
        number, present = _number(raw[column])
        value = number * UNITS[unit].to_si
        bad[field] = present & ~np.isfinite(value)
        table[field] = value.where(~bad[field])
    for column, field in FLAG_COLUMNS.items():
        text = _text(raw[column])
        flag = _flag(text, field)
        bad[field] = text.notna() & flag.isna()
        table[field] = flag
    for field in ABSENT_FIELDS:
        table[field] = np.nan
    table["_row"] = np.arange(1, len(raw) + 1, dtype=np.int64)
    table["_bad"] = _bad_names(bad)
    table["_a_printed"] = _printed_precision(_text(raw["a (au)"]))
    return table
