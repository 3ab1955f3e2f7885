"""Small engine outputs written by hand in the contract's shape (DEVELOPERS.md), for aggregate,
plot and page tests that must not depend on a whole catalogue run.

Derived columns come from the real physics functions, so the numbers are the engine's own.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import polars as pl

from bodycensus.science.physics import bodies as phys
from bodycensus.science.physics import orbits
from bodycensus.science.units import AU, M_EARTH, M_JUPITER, M_SUN, R_JUPITER, R_SUN

HOSTILE_LABEL = '<img src=x onerror="alert(1)">'


def _bodies_frame(rng: np.random.Generator) -> pl.DataFrame:
    """3 stars, 60 rocky planets near 1 M_earth, 20 gas giants, 20 moons, 4 hostile-label rows."""
    rows = [(f"star-{i}", "G2V", "star", None, M_SUN, R_SUN, None, None) for i in range(3)]
    for i in range(60):
        m = M_EARTH * rng.uniform(0.5, 2.0)
        rows.append((f"rock-{i}", "Rocky world", "rock", "star-0", m,
                     float(phys.composition_radius(m, "rock")), AU * rng.uniform(0.5, 3), 0.02))
    giant_radii = []
    for i in range(20):
        m = M_JUPITER * rng.uniform(0.3, 3.0)
        giant_radii.append(float(phys.cold_hhe_radius(m)))
        rows.append((f"giant-{i}", "Gas giant", "gas_giant", "star-1", m, giant_radii[-1],
                     AU * rng.uniform(1, 10), 0.05))
    # moons of giant-0 (density ~470 kg m-3, so the rigid Roche limit is >= 1.5 parent radii);
    # moon-0 orbits at 1.2 parent radii: above the surface, inside the rigid Roche limit
    for i in range(20):
        a = 1.2 * giant_radii[0] if i == 0 else R_JUPITER * rng.uniform(10, 60)
        rows.append((f"moon-{i}", "Icy moon", "ice", "giant-0", 1e21, 8e5, a, 0.0))
    rows += [(f"odd-{i}", HOSTILE_LABEL, "unknown", None, 1e24, 3e6, None, None) for i in range(4)]
    names = ["id", "label", "family", "parent", "mass", "radius", "semi_major_axis", "eccentricity"]
    return pl.DataFrame(rows, schema=names, orient="row")


def _derive(frame: pl.DataFrame) -> pl.DataFrame:
    """Add the derived columns the aggregates read, from the physics module's formulas."""
    parents = frame.select(pl.col("id").alias("parent"), pl.col("mass").alias("parent_mass"),
                           pl.col("radius").alias("parent_radius"))
    out = frame.join(parents, on="parent", how="left").with_columns(
        density=phys.bulk_density(pl.col("mass"), pl.col("radius")),
        gravity=phys.surface_gravity(pl.col("mass"), pl.col("radius")),
        period=orbits.kepler_period(pl.col("semi_major_axis"), pl.col("parent_mass"),
                                    pl.col("mass")),
    )
    out = out.with_columns(
        parent_density=phys.bulk_density(pl.col("parent_mass"), pl.col("parent_radius")),
        periapsis=orbits.periapsis(pl.col("semi_major_axis"), pl.col("eccentricity")),
        apoapsis=orbits.apoapsis(pl.col("semi_major_axis"), pl.col("eccentricity")),
        kepler_period=pl.col("period"),
        # one body's period is off by 3x to make a Kepler residual
        period_ratio=pl.when(pl.col("id") == "moon-5").then(3.0).otherwise(
            pl.when(pl.col("parent").is_not_null()).then(1.0)),
        hill_ratio=pl.when(pl.col("family") == "ice").then(pl.col("semi_major_axis") / 5e10),
    )
    return out.with_columns(
        roche_x=(pl.col("parent_density") / pl.col("density")) ** (1 / 3),
        roche_y=pl.col("periapsis") / pl.col("parent_radius"),
        roche_rigid=orbits.roche_rigid(pl.col("parent_radius"), pl.col("parent_density"),
                                       pl.col("density")),
        roche_fluid=orbits.roche_fluid(pl.col("parent_radius"), pl.col("parent_density"),
                                       pl.col("density")),
        hill_radius=orbits.hill_radius(pl.col("semi_major_axis"), pl.col("eccentricity"),
                                       pl.col("mass"), pl.col("parent_mass")),
        _band_low=pl.lit(1.0),  # a work column of the engine, as the real one writes
        colour=pl.lit("grey"),  # a column of the file that maps to no field
    )


def _findings() -> pl.DataFrame:
    """A few findings in the contract's shape: one per severity and diagram."""
    rows = [
        ("moon-0", "inside-rigid-roche", "impossible", 0.4, "Icy moon", "ice"),
        ("moon-1", "inside-fluid-roche", "note", 0.1, "Icy moon", "ice"),
        ("moon-5", "kepler-mismatch", "suspect", 2.0, "Icy moon", "ice"),
        ("rock-3", "family-density", "suspect", 0.2, "Rocky world", "rock"),
        ("rock-4", "denser-than-iron", "impossible", 0.5, "Rocky world", "rock"),
        ("rock-4", "family-density", "suspect", 0.9, "Rocky world", "rock"),
        ("odd-0", "label-outlier", "suspect", 1.0, HOSTILE_LABEL, "unknown"),
        ("star-2", "missing-value", "error", None, "G2V", "star"),
    ]
    frame = pl.DataFrame(rows, schema=["body", "rule", "severity", "margin", "label", "family"],
                         orient="row")
    return frame.with_columns(
        value=pl.lit(1.0), limit=pl.lit(1.0), unit=pl.lit("1"),
        message=pl.format("{} broke {}", "body", "rule"), source=pl.lit("test"),
        _row=pl.int_range(1, pl.len() + 1, dtype=pl.Int64),
    )


def _artefacts() -> pl.DataFrame:
    """One artefact of each kind on the mass of the rocky label (SI values)."""
    rows = [("label", "Rocky world", "mass", "cutoff", 0.5 * M_EARTH, None, None),
            ("label", "Rocky world", "mass", "gap", None, 0.9 * M_EARTH, 1.1 * M_EARTH),
            ("label", "Gas giant", "radius", "spike", 1.0 * R_JUPITER, None, None)]
    frame = pl.DataFrame(rows, schema=["scope", "label", "field", "kind", "at", "low", "high"],
                         orient="row")
    return frame.with_columns(observed=pl.lit(0), expected=pl.lit(12.5),
                              evidence=pl.lit("test"), p_value=pl.lit(1e-6))


def write_engine_output(workdir: Path, seed: int = 7) -> Path:
    """Write bodies/findings/artefacts/coverage Parquet files into ``workdir``; return it."""
    workdir.mkdir(parents=True, exist_ok=True)
    _derive(_bodies_frame(np.random.default_rng(seed))).write_parquet(workdir / "bodies.parquet")
    _findings().write_parquet(workdir / "findings.parquet")
    _artefacts().write_parquet(workdir / "artefacts.parquet")
    pl.DataFrame({"rule": ["inside-rigid-roche"], "title": ["Inside the rigid Roche limit"],
                  "severity": ["impossible"], "evaluated": [20], "skipped": [87],
                  "why": ["no parent"]}).write_parquet(workdir / "coverage.parquet")
    return workdir
