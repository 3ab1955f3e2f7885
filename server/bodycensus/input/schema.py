"""Canonical fields, header aliases and unit hints, and the column mapping of a catalogue file.

A header such as ``radius_km``, ``mass [earth_mass]`` or ``a (AU)`` names a field and, optionally,
the unit its values are in. ``guess_mapping`` turns a file's header into a ``Mapping`` (which
column feeds which field, in which unit, and how sure we are); ``--map`` and ``--unit`` overrides
replace guesses. Knows ``units`` only.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Literal, TypedDict

import polars as pl

from bodycensus.errors import InputError
from bodycensus.science.units import (
    ERROR_FIELDS,
    FIELD_DIMENSIONS,
    RELATIVE_FIELDS,
    SI_UNIT,
    UNITS,
    Unit,
    find_unit,
)

CANONICAL_FIELDS: tuple[str, ...] = (
    "id", "name", "label", "family", "parent", "system", "mass", "radius", "semi_major_axis",
    "eccentricity", "period", "rotation_period", "tidally_locked", "age", "temperature",
    "luminosity", "inclination", "retrograde", "ring_inner", "ring_outer", "ring_mass",
    "ring_density", *ERROR_FIELDS,
)
TEXT_FIELDS: tuple[str, ...] = ("id", "name", "label", "family", "parent", "system")
BOOLEAN_FIELDS: tuple[str, ...] = ("tidally_locked", "retrograde")
NUMERIC_FIELDS: tuple[str, ...] = tuple(
    f for f in CANONICAL_FIELDS if f not in TEXT_FIELDS and f not in BOOLEAN_FIELDS
)
FIELD_TYPES: dict[str, pl.DataType] = {
    f: pl.String() if f in TEXT_FIELDS else pl.Boolean() if f in BOOLEAN_FIELDS else pl.Float64()
    for f in CANONICAL_FIELDS
}
# A ring's fields describe the ring a row IS (a body of the `ring` family, whose parent is its
# planet) or the ring a row CARRIES (columns of the planet); `ring_inner`/`ring_outer` may be
# given in radii of that planet (unit `planet_radius`), which derive resolves.

def _error_aliases(value: str, low: bool) -> tuple[str, ...]:
    """Header names of a value's uncertainty: ``mass_error``, ``mass_err``, ``e_mass``, and the
    two sides as exoplanet.eu (``mass_error_min``/``_max``) and others write them."""
    names = {"mass": ("mass",), "radius": ("radius",), "semi_major_axis": ("semi_major_axis", "a"),
             "period": ("period", "orbital_period")}[value]
    sides = (("_error_min", "_err_low", "_errdn", "_err_minus", "_error_minus", "_error_low")
             if low else ("_error", "_err", "_error_max", "_err_high", "_errup", "_err_plus",
                          "_error_plus"))
    return tuple(n + side for n in names for side in sides) + (
        () if low else tuple(f"e_{n}" for n in names))


_FIELD_ALIASES: dict[str, tuple[str, ...]] = {
    "id": ("id", "body_id", "uid", "objid", "object_id"),
    "name": ("name", "designation", "body_name"),
    "label": ("label", "type", "class", "kind", "body_type", "category"),
    "family": ("family",),
    "parent": ("parent", "orbits", "host", "primary", "parent_id", "central_body"),
    "system": ("system", "system_id", "star_system"),
    "mass": ("mass", "m", "mass_kg"),
    "radius": ("radius", "r", "rad"),
    "semi_major_axis": ("semi_major_axis", "a", "sma", "semimajor", "orbit_radius",
                        "orbital_radius", "distance"),
    "eccentricity": ("eccentricity", "e", "ecc"),
    "period": ("period", "orbital_period", "p", "per", "year_length"),
    "rotation_period": ("rotation_period", "rotation", "day_length", "spin_period"),
    "tidally_locked": ("tidally_locked", "locked", "tidal_lock"),
    "age": ("age",),
    "temperature": ("temperature", "temp", "teff", "t_eq", "surface_temperature"),
    "luminosity": ("luminosity", "lum"),
    "inclination": ("inclination", "incl", "inc", "i"),
    "retrograde": ("retrograde", "orbit_sense", "sense", "orbit_direction"),
    "ring_inner": ("ring_inner", "ring_inner_radius", "ring_inner_edge", "inner_radius",
                   "inner_edge", "rings_inner"),
    "ring_outer": ("ring_outer", "ring_outer_radius", "ring_outer_edge", "outer_radius",
                   "outer_edge", "rings_outer"),
    "ring_mass": ("ring_mass", "rings_mass"),
    "ring_density": ("ring_density", "ring_material_density", "material_density", "ring_rho"),
    **{error: _error_aliases(value, error.endswith("_low"))
       for error, value in ERROR_FIELDS.items()},
}

# Bare suffixes whose unit depends on the field: `mass_earth`, `radius_jup`, `luminosity_sun`.
_BODY_SUFFIXES: dict[str, dict[str, str]] = {
    "earth": {"mass": "earth_mass", "length": "earth_radius"},
    "jup": {"mass": "jupiter_mass", "length": "jupiter_radius"},
    "jupiter": {"mass": "jupiter_mass", "length": "jupiter_radius"},
    "sun": {"mass": "solar_mass", "length": "solar_radius", "power": "solar_luminosity"},
    "sol": {"mass": "solar_mass", "length": "solar_radius", "power": "solar_luminosity"},
    "solar": {"mass": "solar_mass", "length": "solar_radius", "power": "solar_luminosity"},
}
# Years and seconds are one family of units: ages are kept in years, periods in seconds.
_YEAR_S = UNITS["yr"].to_si
_BRACKETED = re.compile(r"^(?P<base>.*?)\s*[\(\[](?P<unit>[^\)\]]*)[\)\]]\s*$")

UnitSource = Literal["header", "override", "default", "value"]  # value: its value's unit
# The column an id comes from when the file has none: each body is named by its row number.
ROW_NUMBERS = "<row number>"
# Fields that may share one column with another (a name column that is also the id).
SHAREABLE_FIELDS = frozenset({"id", "name"})


class ChoiceRecord(TypedDict):
    """A ColumnChoice as JSON (the API, the manifest, ``bodycensus check``)."""

    field: str
    column: str
    unit: str | None
    unit_source: UnitSource
    ambiguous: bool


class MappingRecord(TypedDict):
    """A Mapping as JSON: field -> its column, the columns left over, the conflicts."""

    choices: dict[str, ChoiceRecord]
    unknown_columns: list[str]
    conflicts: dict[str, list[str]]  # field -> columns not chosen
    missing_fields: list[str]


class SchemaError(InputError):
    """A mapping or unit choice that cannot be used; the message says what to do instead."""


def _key(text: str) -> str:
    """Header text without case, spaces or punctuation: 'Semi-major axis' -> 'semimajoraxis'."""
    return re.sub(r"[^0-9a-z]", "", text.lower())


_ALIAS_TO_FIELD: dict[str, str] = {
    _key(alias): name for name, aliases in _FIELD_ALIASES.items() for alias in aliases
}


@dataclass(frozen=True)
class ColumnChoice:
    """Which source column feeds a canonical field, in which unit, and whether the unit is a guess.
    """

    field: str
    column: str
    unit: str | None
    unit_source: UnitSource
    ambiguous: bool

    def factor(self) -> float:
        """Multiply the column's numbers by this to get the field in SI (ages in years)."""
        return 1.0 if self.unit is None else _factor_for(self.field, UNITS[self.unit])

    @property
    def relative(self) -> bool:
        """Whether the column is in radii of the ring's planet (derive turns it into metres)."""
        return self.unit is not None and UNITS[self.unit].relative

    def to_json(self) -> ChoiceRecord:
        """A plain dict for the API and the report."""
        return {"field": self.field, "column": self.column, "unit": self.unit,
                "unit_source": self.unit_source, "ambiguous": self.ambiguous}


@dataclass(frozen=True)
class Mapping:
    """The column mapping of one file: chosen columns per field, and the columns left over."""

    choices: dict[str, ColumnChoice]
    unknown_columns: list[str]
    conflicts: dict[str, list[str]] = field(default_factory=dict)  # field -> columns not chosen
    # field -> more columns of it, each in a unit of its own (``mass [M_sun]`` beside
    # ``mass [M_jup]``): a row takes the first of them that holds a value
    fallbacks: dict[str, list[ColumnChoice]] = field(default_factory=dict)

    @property
    def missing_fields(self) -> list[str]:
        """Canonical fields that no column feeds."""
        return [f for f in CANONICAL_FIELDS if f not in self.choices]

    def to_json(self) -> MappingRecord:
        """A plain dict for the API and the report."""
        return {
            "choices": {f: c.to_json() for f, c in self.choices.items()},
            "unknown_columns": list(self.unknown_columns),
            "conflicts": {f: list(cols) for f, cols in self.conflicts.items()},
            "missing_fields": self.missing_fields,
        }


def _dimension_fits(field_name: str, unit: Unit) -> bool:
    """Whether ``unit`` can measure ``field_name`` (time and age units are interchangeable; a
    relative unit only the fields that may be given relative to the ring's planet)."""
    if unit.relative and field_name not in RELATIVE_FIELDS:
        return False
    need = FIELD_DIMENSIONS.get(field_name)
    if need in ("time", "age"):
        return unit.dimension in ("time", "age")
    return need is not None and unit.dimension == need


def _factor_for(field_name: str, unit: Unit) -> float:
    """The factor from ``unit`` to the field's internal unit (SI; years for ages)."""
    need = FIELD_DIMENSIONS[field_name]
    if need == unit.dimension:
        return unit.to_si
    if need == "age":  # a time unit, e.g. yr or s: to years
        return unit.to_si / _YEAR_S
    return unit.to_si * _YEAR_S  # an age unit (years, Myr, Gyr) for a period: to seconds


def _hint_unit(field_name: str, text: str) -> Unit | None:
    """The unit written as ``text`` in a header of ``field_name``, if it fits the field."""
    dimension = FIELD_DIMENSIONS.get(field_name)
    body = _BODY_SUFFIXES.get(text.strip().lower())
    unit = UNITS[body[dimension]] if body and dimension in body else find_unit(text)
    return unit if unit is not None and _dimension_fits(field_name, unit) else None


def _unit_parts(column: str) -> list[tuple[str, str]]:
    """Ways to split a header into (name, unit text): 'a (AU)', 'mass [M_jup]', 'radius_km'."""
    bracketed = _BRACKETED.match(column)
    if bracketed:
        return [(bracketed["base"], bracketed["unit"])]
    tokens = [t for t in re.split(r"[^0-9A-Za-z]+", column) if t]
    return [("".join(tokens[:-cut]), "_".join(tokens[-cut:]))
            for cut in (1, 2) if len(tokens) > cut]  # radius_km, mass_earth_mass


def _hint_for(field_name: str, column: str) -> Unit | None:
    """The unit a header hints at for ``field_name``, whatever name the header gives the field."""
    for _, unit_text in _unit_parts(column):
        unit = _hint_unit(field_name, unit_text)
        if unit is not None:
            return unit
    return None


def read_header(column: str) -> tuple[str | None, Unit | None]:
    """The field a header names and the unit it hints at, e.g. 'a (AU)' -> ('semi_major_axis', au).
    """
    parts = _unit_parts(column)
    for base, unit_text in parts:
        name = _ALIAS_TO_FIELD.get(_key(base))
        unit = _hint_unit(name, unit_text) if name else None
        if unit is not None:
            return name, unit
    if parts and _BRACKETED.match(column):  # 'radius (furlongs)': the field, but no usable unit
        return _ALIAS_TO_FIELD.get(_key(parts[0][0])), None
    return _ALIAS_TO_FIELD.get(_key(column)), None


def field_names() -> str:
    """The canonical field names, for error messages."""
    return ", ".join(CANONICAL_FIELDS)


def parse_assignment(text: str) -> tuple[str, str]:
    """Split a ``field=value`` option (``--map``/``--unit``) into a known field and its value."""
    name, sep, value = text.partition("=")
    name, value = name.strip().lower(), value.strip()
    if not sep or not name or not value:
        raise SchemaError(f"'{text}' is not of the form field=value, e.g. radius=radius_km")
    if name not in CANONICAL_FIELDS:
        raise SchemaError(f"unknown field '{name}'; use one of: {field_names()}")
    return name, value


def _check_field(name: str) -> str:
    """``name`` as a canonical field, or a SchemaError listing the fields."""
    clean = name.strip().lower()
    if clean not in CANONICAL_FIELDS:
        raise SchemaError(f"unknown field '{name}'; use one of: {field_names()}")
    return clean


def check_unit(field_name: str, unit_name: str) -> Unit:
    """The unit ``unit_name`` for ``field_name``; SchemaError if unknown or of the wrong dimension.
    """
    name = _check_field(field_name)
    if name not in FIELD_DIMENSIONS:
        raise SchemaError(f"field '{name}' has no unit; drop --unit {name}=...")
    unit = find_unit(unit_name)
    if unit is None:
        known = ", ".join(UNITS)
        raise SchemaError(f"unknown unit '{unit_name}' for {name}; use one of: {known}")
    if unit.relative and name not in RELATIVE_FIELDS:
        raise SchemaError(f"unit '{unit.name}' is a multiple of the radius of a ring's planet; "
                          f"only {', '.join(sorted(RELATIVE_FIELDS))} can be given in it")
    if not _dimension_fits(name, unit):
        fits = ", ".join(u.name for u in UNITS.values() if _dimension_fits(name, u))
        raise SchemaError(
            f"unit '{unit_name}' measures {unit.dimension}, but {name} needs one of: {fits}"
        )
    return unit


def _choice(name: str, column: str, hint: Unit | None, override: Unit | None) -> ColumnChoice:
    """The ColumnChoice for one field, with the unit from override, header hint or default."""
    dimension = FIELD_DIMENSIONS.get(name)
    if dimension is None:
        return ColumnChoice(name, column, None, "default", False)
    if override is not None:
        return ColumnChoice(name, column, override.name, "override", False)
    if hint is not None:
        return ColumnChoice(name, column, hint.name, "header", False)
    return ColumnChoice(name, column, SI_UNIT[dimension], "default", dimension != "dimensionless")


Found = dict[str, tuple[str, Unit | None]]  # field -> (its column, the unit its header hints)


def _guess_columns(columns: list[str]) -> tuple[Found, dict[str, list[str]]]:
    """Field -> (first matching column, its hint); and field -> later columns that also matched."""
    found: Found = {}
    conflicts: dict[str, list[str]] = {}
    for column in columns:
        name, hint = read_header(column)
        if name is None:
            continue
        if name in found:
            conflicts.setdefault(name, []).append(column)
        else:
            found[name] = (column, hint)
    return found, conflicts


def describe_columns(columns: list[str], most: int = 20) -> str:
    """A file's column names for an error message: quoted, shortened, at most ``most`` of them."""
    if not columns:
        return "(no columns)"
    shown = [repr(c if len(c) <= 40 else c[:37] + "...") for c in columns[:most]]
    more = f" and {len(columns) - most} more" if len(columns) > most else ""
    return ", ".join(shown) + more


def _apply_map_overrides(found: Found, columns: list[str], overrides: dict[str, str]) -> None:
    """Point each overridden field at its named column (checked against the file's columns);
    ``id`` may also come from the row numbers, and ``id`` and ``name`` may share a column."""
    for raw_field, column in overrides.items():
        name = _check_field(raw_field)
        if name == "id" and column == ROW_NUMBERS:
            found[name] = (column, None)
            continue
        if column not in columns:
            raise SchemaError(f"--map {name}={column}: no column '{column}' in the file; "
                              f"its columns are {describe_columns(columns)}")
        for other, (taken, _) in list(found.items()):
            shared = {name, other} <= SHAREABLE_FIELDS and overrides.get(other) == column
            if taken == column and other != name and not shared:
                del found[other]
        found[name] = (column, _hint_for(name, column))


def physical_fields(mapping: Mapping) -> list[str]:
    """The numeric fields a mapping feeds (mass, radius, orbit, ...): a catalogue needs one."""
    return [f for f in NUMERIC_FIELDS if f in mapping.choices]


def guess_mapping(
    columns: list[str],
    map_overrides: dict[str, str] | None = None,
    unit_overrides: dict[str, str] | None = None,
) -> Mapping:
    """Match a file's header to canonical fields by alias and unit hint, then apply overrides."""
    found, conflicts = _guess_columns(columns)
    _apply_map_overrides(found, columns, map_overrides or {})
    units = {_check_field(f): check_unit(f, u) for f, u in (unit_overrides or {}).items()}
    choices = {
        name: _choice(name, *found[name], units.get(name))
        for name in CANONICAL_FIELDS if name in found
    }
    for error, value in ERROR_FIELDS.items():  # an uncertainty is in its value's unit
        if error in choices and choices[error].unit_source == "default" and value in choices:
            choices[error] = ColumnChoice(error, choices[error].column, choices[value].unit,
                                          "value", False)
    fallbacks = _fallbacks(choices, conflicts, map_overrides or {}, units)
    used = {c.column for c in choices.values()} | {
        c.column for extra in fallbacks.values() for c in extra}
    conflicts = {f: [c for c in cols if c not in used] for f, cols in conflicts.items()}
    return Mapping(
        choices=choices,
        unknown_columns=[c for c in columns if c not in used],
        conflicts={f: cols for f, cols in conflicts.items() if cols},
        fallbacks=fallbacks,
    )


def _fallbacks(choices: dict[str, ColumnChoice], conflicts: dict[str, list[str]],
               overrides: dict[str, str], units: dict[str, Unit]
               ) -> dict[str, list[ColumnChoice]]:
    """More columns of a field whose headers each name a unit of their own, as the chosen
    column's does: one field given in two units (hosts in solar masses, planets in Jupiter
    masses), coalesced row by row. A field set by --map or --unit takes its one column."""
    found: dict[str, list[ColumnChoice]] = {}
    for name, columns in conflicts.items():
        chosen = choices.get(name)
        if chosen is None or chosen.unit_source != "header" or name in overrides \
                or name in units:
            continue
        extra = [ColumnChoice(name, c, hint.name, "header", False) for c in columns
                 if (hint := _hint_for(name, c)) is not None and hint.name != chosen.unit]
        if extra:
            found[name] = extra
    return found
