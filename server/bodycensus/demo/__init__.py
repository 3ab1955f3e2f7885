"""The invented demo catalogue: the Varrow Shoals, a sector of the fictional simulation *Longwake*.

``generate_demo`` builds a seeded population of stars, planets, asteroids and moons with smooth
(log-normal) laws and stable orbits (demo_population), plants a few defects of every rule and
three generator artefacts (demo_defects_*), and returns the catalogue, in the column names and
units a catalogue dump would use, with its exact ground truth. ``write_demo`` writes both.
"""

from __future__ import annotations

import gzip
import os
from pathlib import Path
from typing import IO, cast

import numpy as np
import polars as pl

from bodycensus.demo.defects_body import BODY_PLANTINGS
from bodycensus.demo.defects_orbit import ORBIT_PLANTINGS
from bodycensus.demo.defects_rings import RING_TIDE_PLANTINGS
from bodycensus.demo.kinds import LABELS
from bodycensus.demo.names import body_names, system_names
from bodycensus.demo.planter import Planter
from bodycensus.demo.population import (
    CUTOFF_RADIUS,
    GAP_SPIN,
    SPIKE_MASS,
    GeneratorSettings,
    population,
)
from bodycensus.science.units import AU, DAY, HOUR, L_SUN, M_EARTH

BODIES_PER_SYSTEM = 6.0  # about what population() yields; used to size the first attempt
SIGNIFICANT_DIGITS = 6
COLUMNS = ("id", "name", "type", "orbits", "system", "mass (earth_mass)", "radius_km", "a (au)",
           "e", "period_days", "rotation_h", "locked", "age_gyr", "temp_k",
           "luminosity (L_sun)", "orbit_sense", "ring inner [R_planet]", "ring outer [R_planet]",
           "ring density (kg/m3)", "mass error (earth_mass)")
TRUTH_COLUMNS = ("kind", "rule", "body", "other", "label", "field", "at", "low", "high")
ARTEFACTS = (  # kind, label, canonical field, at, low, high (SI)
    ("cutoff", "asteroid", "radius", CUTOFF_RADIUS, CUTOFF_RADIUS, None),
    ("gap", "ice giant", "rotation_period", (GAP_SPIN[0] * GAP_SPIN[1]) ** 0.5, *GAP_SPIN),
    ("spike", "ocean world", "mass", SPIKE_MASS, SPIKE_MASS, SPIKE_MASS),
)
SUFFIXES = (".csv.gz", ".csv", ".parquet", ".ndjson")


def _clean(n_bodies: int, seed: int, settings: GeneratorSettings | None = None
           ) -> dict[str, np.ndarray]:
    """Exactly ``n_bodies`` clean rows: whole systems, the last one cut short (outer first)."""
    attempt = 0
    while True:
        rng = np.random.default_rng([seed, attempt])
        n_systems = int(n_bodies / BODIES_PER_SYSTEM * 1.1 * 1.5**attempt) + 8
        table = population(rng, n_systems, settings)
        if len(table["code"]) >= n_bodies:
            return {k: v[:n_bodies] for k, v in table.items()}
        attempt += 1


def _spoil(table: dict[str, np.ndarray], n_bodies: int, seed: int) -> Planter:
    """Plant max(3, N / 20,000) defects of every rule, each in a system of its own."""
    table.setdefault("mass_err", np.full(len(table["code"]), np.nan))  # measured: none but planted
    planter = Planter(np.random.default_rng([seed, 999]), table, max(3, n_bodies // 20_000))
    for plant in (*BODY_PLANTINGS, *ORBIT_PLANTINGS, *RING_TIDE_PLANTINGS):
        plant(planter)
    return planter


def significant(x: np.ndarray, digits: int = SIGNIFICANT_DIGITS) -> np.ndarray:
    """``x`` rounded to ``digits`` significant digits (NaN, inf and zero left alone)."""
    out = np.array(x, dtype=float)
    ok = np.isfinite(out) & (out != 0.0)
    v = out[ok]
    shift = digits - 1 - np.floor(np.log10(np.abs(v))).astype(int)
    up = shift >= 0
    v[up] = np.round(v[up] * 10.0 ** shift[up]) / 10.0 ** shift[up]
    v[~up] = np.round(v[~up] / 10.0 ** -shift[~up]) * 10.0 ** -shift[~up]
    out[ok] = v
    return out


def _ids(p: Planter) -> pl.Series:
    """Row ids ``B0000001``..., with the planted duplicates copying another row's id."""
    n = len(p.t["code"])
    width = max(7, len(str(n)))
    ids = "B" + pl.Series("id", np.arange(1, n + 1)).cast(pl.String).str.zfill(width)
    rows = np.array(list(p.duplicates), dtype=np.int64)
    originals = np.array(list(p.duplicates.values()), dtype=np.int64)
    ids = ids.alias("id")
    return ids.scatter(rows, ids.gather(originals)) if len(rows) else ids


def _parents(p: Planter, ids: pl.Series) -> pl.Series:
    """The ``orbits`` column: the parent's id, null for none, a dangling id for planted orphans."""
    parent = p.t["parent"]
    orbits = pl.select(pl.when(pl.Series(parent >= 0))
                       .then(ids.gather(np.maximum(parent, 0)))).to_series()
    orphans = np.array(p.orphans, dtype=np.int64)
    dangling = "Z" + orbits.gather(orphans).str.slice(1)
    return (orbits.scatter(orphans, dangling) if len(orphans) else orbits).alias("orbits")


def _number(name: str, values: np.ndarray) -> pl.Series:
    return pl.Series(name, significant(values), nan_to_null=True)


def _temperatures(p: Planter) -> pl.Series:
    """Temperatures as text (the column holds the planted unreadable cells)."""
    text = pl.Series("temp_k", significant(p.t["temp"]), nan_to_null=True).cast(pl.String)
    rows = np.array(list(p.bad_cells), dtype=np.int64)
    return text.scatter(rows, pl.Series(list(p.bad_cells.values()), dtype=pl.String)) \
        if len(rows) else text


def _catalogue(p: Planter, systems: pl.Series, names: pl.Series) -> pl.DataFrame:
    """The catalogue in the dump's own column names and units."""
    t, ids = p.t, _ids(p)
    orbiting = (t["tier"] == 1) | (t["tier"] == 2)  # rings (tier 3) are not locked or unlocked
    locked = pl.select(pl.when(pl.Series(orbiting)).then(pl.Series(t["locked"])))
    sense = pl.select(pl.when(pl.Series(t["tier"] == 2)).then(
        pl.when(pl.Series(t["retrograde"])).then(pl.lit("retrograde")).otherwise(
            pl.lit("prograde")))).to_series().alias("orbit_sense")
    frame = pl.DataFrame([
        ids, names,
        pl.Series("type", LABELS, dtype=pl.String).gather(t["code"]),
        _parents(p, ids), systems.alias("system"),
        _number("mass (earth_mass)", t["mass"] / M_EARTH),
        _number("radius_km", t["radius"] / 1e3), _number("a (au)", t["a"] / AU),
        _number("e", t["e"]), _number("period_days", t["period"] / DAY),
        _number("rotation_h", t["rotation"] / HOUR), locked.to_series().alias("locked"),
        _number("age_gyr", t["age"] / 1e9), _temperatures(p),
        _number("luminosity (L_sun)", t["lum"] / L_SUN), sense,
        _number("ring inner [R_planet]", t["ring_inner"]),
        _number("ring outer [R_planet]", t["ring_outer"]),
        _number("ring density (kg/m3)", t["ring_density"]),
        _number("mass error (earth_mass)", t["mass_err"] / M_EARTH),
    ])
    assert frame.columns == list(COLUMNS), frame.columns
    return frame


def _truth(p: Planter, id_column: pl.Series) -> pl.DataFrame:
    """Ground truth: one row per planted body and rule, then one per artefact."""
    used = sorted({r for _, r, o in p.truth} | {o for _, _, o in p.truth if o >= 0})
    ids = dict(zip(used, id_column.gather(used).to_list(), strict=True))
    rows: list[tuple[object, ...]] = [
        ("rule", rule, ids[r], ids[o] if o >= 0 else None, LABELS[p.t["code"][r]], None, None,
         None, None) for rule, r, o in p.truth]
    rows += [("artefact", kind, None, None, label, field, at, low, high)
             for kind, label, field, at, low, high in ARTEFACTS]
    schema = dict.fromkeys(TRUTH_COLUMNS[:6], pl.String) | dict.fromkeys(TRUTH_COLUMNS[6:],
                                                                            pl.Float64)
    return pl.DataFrame(rows, schema=schema, orient="row")


def generate_demo(n_bodies: int, seed: int = 7, settings: GeneratorSettings | None = None
                  ) -> tuple[pl.DataFrame, pl.DataFrame]:
    """The demo catalogue of ``n_bodies`` rows and its ground truth (see sample_data/README.md);
    ``settings`` change the generator (the defaults make the documented demo)."""
    if n_bodies < 1:
        raise ValueError(f"a demo catalogue needs at least one body, not {n_bodies}")
    clean = _clean(n_bodies, seed, settings)
    systems = system_names(clean["sys"], np.random.default_rng([seed, 998]))
    names = body_names(systems, clean["tier"], clean["sys"], clean["parent"], clean["code"])
    planter = _spoil(clean, n_bodies, seed)
    catalogue = _catalogue(planter, systems, names)
    return catalogue, _truth(planter, catalogue["id"])


def truth_path(out: Path) -> Path:
    """Where the ground truth of catalogue ``out`` goes: ``<stem>.truth.csv`` beside it."""
    name = out.name
    for suffix in SUFFIXES:
        if name.endswith(suffix):
            return out.with_name(name[: -len(suffix)] + ".truth.csv")
    raise ValueError(f"cannot write '{out}': name the demo file *.csv, *.csv.gz, *.parquet or "
                     "*.ndjson")


def _write(frame: pl.DataFrame, out: Path) -> None:
    """Write ``frame`` in the format its suffix names, atomically (temp file, then rename)."""
    tmp = out.with_name(f".{out.name}.{os.getpid()}.tmp")
    try:
        if out.name.endswith(".csv.gz"):
            with open(tmp, "wb") as raw, gzip.GzipFile("", "wb", 1, raw, mtime=0) as packed:
                frame.write_csv(cast(IO[bytes], packed))  # a GzipFile is a binary stream
        elif out.name.endswith(".csv"):
            frame.write_csv(tmp)
        elif out.name.endswith(".parquet"):
            frame.write_parquet(tmp)
        else:
            frame.write_ndjson(tmp)
        os.replace(tmp, out)
    finally:
        tmp.unlink(missing_ok=True)


def write_demo(out: Path, n_bodies: int, seed: int = 7,
               settings: GeneratorSettings | None = None) -> tuple[Path, Path]:
    """Write the demo catalogue to ``out`` and its truth beside it; returns both paths."""
    out = Path(out)
    truth_out = truth_path(out)
    catalogue, truth = generate_demo(n_bodies, seed, settings)
    _write(catalogue, out)
    _write(truth, truth_out)
    return out, truth_out
