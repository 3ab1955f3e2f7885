"""Host rows from host columns: a catalogue of one row per planet, whose host star's name, mass,
radius and so on sit in columns of each planet's row (the usual shape of published exoplanet
catalogues), becomes one row per planet plus one row per host, each planet's parent its host.

``HostColumns`` says which column holds which field of the host (and in which unit); the planet
mapping never takes those columns. A host's id is its name column's value, or, when the
catalogue names no host, ``host of <planet id>`` (one host per planet: siblings are then not
known to share a star, and the sibling rules do not see them). A host listed beside several
planets takes, field by field, the first value given.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import polars as pl

from bodycensus.input.schema import Mapping, SchemaError, check_unit, guess_mapping

HOST_LABEL = "host star"  # the label of a host row when the catalogue gives none


@dataclass(frozen=True)
class HostColumns:
    """Which column holds each field of the host (``name``, ``mass``, ``radius``, ``temperature``,
    ``age``, ``luminosity``, ``label``), the unit of each, and the label of host rows."""

    columns: dict[str, str] = field(default_factory=dict)
    units: dict[str, str] = field(default_factory=dict)
    label: str = HOST_LABEL

    def __bool__(self) -> bool:
        return bool(self.columns)

    def check(self, file_columns: list[str]) -> None:
        """Refuse (SchemaError) a host field or unit that cannot be used, in one line."""
        for name, column in self.columns.items():
            if name in ("id", "parent", "system", "family"):
                raise SchemaError(f"--host-columns {name}=...: a host's {name} is made here; "
                                  "give its name (name=COLUMN)")
            if column not in file_columns:
                raise SchemaError(f"--host-columns {name}={column}: no column '{column}' in "
                                  "the file")
        for name, unit in self.units.items():
            if name not in self.columns:
                raise SchemaError(f"--host-unit {name}={unit}: no host column for {name}; "
                                  f"add --host-columns {name}=COLUMN")
            check_unit(name, unit)

    def mapping(self, file_columns: list[str], id_column: str) -> Mapping:
        """The mapping of the host fields (its id from the name column, or the planet's id)."""
        overrides = dict(self.columns)
        overrides["id"] = overrides.get("name", id_column)
        guessed = guess_mapping(file_columns, overrides, self.units)
        wanted = set(overrides)
        return Mapping({f: c for f, c in guessed.choices.items() if f in wanted}, [])


def host_id(hosts: HostColumns, planet_id: pl.Expr, name_column: pl.Expr) -> pl.Expr:
    """The id of a row's host: its name, or ``host of <planet id>`` without a name column."""
    if "name" in hosts.columns:
        text = name_column.str.strip_chars()
        return pl.when(text != "").then(text)
    return pl.concat_str(pl.lit("host of "), planet_id)


def host_rows(hosts: HostColumns, normalised: pl.LazyFrame, planet_ids: pl.LazyFrame
              ) -> pl.LazyFrame:
    """One row per host from the normalised host fields of every planet row: the first value
    of each field, the first planet's source row, the label given or ``HOST_LABEL``. A host
    whose name is a body's id in the file (a brown dwarf listed as its own host, a planet
    hosting another) is that body: no row is added for it."""
    rows = normalised if "name" in hosts.columns else normalised.with_columns(
        pl.concat_str(pl.lit("host of "), pl.col("id")).alias("id"))
    rows = rows.filter(pl.col("id").is_not_null())
    label = pl.col("label") if "label" in hosts.columns else pl.lit(hosts.label)
    rows = rows.with_columns(label.fill_null(pl.lit(hosts.label)).alias("label"),
                             pl.col("id").alias("system"))
    firsts = [pl.col(c).drop_nulls().first() for c in rows.collect_schema().names()
              if c not in ("id", "_row")]
    found = rows.group_by("id", maintain_order=True).agg(pl.col("_row").min(), *firsts)
    return found.join(planet_ids, on="id", how="anti")


def planets_with_hosts(hosts: HostColumns, planets: pl.LazyFrame, name_column: str | None
                       ) -> pl.LazyFrame:
    """Planet rows whose parent and system (where the file gives none) are their host."""
    name = pl.col(name_column) if name_column else pl.lit(None, dtype=pl.String)
    host = host_id(hosts, pl.col("id"), name)
    host = pl.when(host != pl.col("id")).then(host)  # a body listed as its own host has none
    return planets.with_columns(pl.coalesce(pl.col("parent"), host).alias("parent"),
                                pl.coalesce(pl.col("system"), host).alias("system"))


def host_fields_text(hosts: HostColumns) -> str:
    """The host fields in words, for the ingest's notes."""
    return ", ".join(f"{f} from '{c}'" + (f" ({hosts.units[f]})" if f in hosts.units else "")
                     for f, c in hosts.columns.items())
