"""Tiny literal catalogues in the normalised-table shape, run through the real engine.

Tests state a few bodies as dicts in SI units; every canonical field left out is null.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import polars as pl

from bodycensus.engines.local import CheckOptions, CheckResult, check_table
from bodycensus.input.schema import CANONICAL_FIELDS, FIELD_TYPES
from bodycensus.science.physics.orbits import kepler_period
from bodycensus.science.units import AU, M_EARTH, M_SUN, PLANET_RADII, R_SUN

# The rule ids issues 2 (item 6) and 15 fix, plus bad-cell for unreadable cells: an oracle written
# independently of the registry, which the registry test compares against.
ISSUE_RULE_IDS: tuple[str, ...] = (
    "missing-value", "non-positive", "duplicate-id", "orphan-parent", "parent-cycle", "unit-slip",
    "bad-eccentricity", "bad-cell", "denser-than-iron", "family-density", "oversized-cold-body",
    "over-chandrasekhar", "over-neutron-star-max", "under-hydrogen-burning", "brown-dwarf-range",
    "periapsis-inside-parent", "inside-rigid-roche", "inside-fluid-roche", "roche-lobe-overflow",
    "outside-hill-sphere", "beyond-stable-hill", "kepler-mismatch", "crossing-orbits",
    "hill-spacing", "heavier-than-parent", "binary-barycentre", "tidal-lock-age", "label-outlier",
    # issue 15: rings, tidal heating, lifetimes
    "ring-edges-reversed", "ring-inside-planet", "ring-beyond-roche", "ring-beyond-hill",
    "moon-in-ring", "tidal-heating", "short-lived-orbit",
    # issue 12: real catalogues
    "degenerate-star", "mass-upper-limit", "duplicate-orbit",
)

SUN_LIKE = {"id": "S", "label": "yellow dwarf star", "family": "star", "mass": M_SUN,
            "radius": R_SUN, "age": 4.6e9}
EARTH_LIKE = {"id": "P", "label": "terrestrial planet", "family": "rock", "parent": "S",
              "mass": M_EARTH, "radius": 6.371e6, "semi_major_axis": AU,
              "eccentricity": 0.0167, "period": kepler_period(AU, M_SUN, M_EARTH), "age": 4.6e9}


def normalised(rows: list[dict[str, Any]]) -> pl.DataFrame:
    """A normalised table (DEVELOPERS.md) from rows of canonical fields plus optional ``_bad``
    and ``_planet_radii``."""
    columns: dict[str, pl.Series] = {}
    for name in CANONICAL_FIELDS:
        columns[name] = pl.Series(name, [row.get(name) for row in rows], dtype=FIELD_TYPES[name])
    frame = pl.DataFrame(columns)
    return frame.with_columns(
        pl.int_range(1, pl.len() + 1, dtype=pl.Int64).alias("_row"),
        pl.Series("_bad", [row.get("_bad") for row in rows], dtype=pl.String),
        pl.Series(PLANET_RADII, [row.get(PLANET_RADII) for row in rows], dtype=pl.String),
    )


def run(rows: list[dict[str, Any]], workdir: Path, **options: Any) -> CheckResult:
    """Check the rows with the real engine (artefacts off unless asked)."""
    options.setdefault("artefacts", False)
    return check_table(normalised(rows).lazy(), workdir, CheckOptions(**options))


def fired(result: CheckResult, rule: str) -> dict[str, str]:
    """``{body: severity}`` of one rule's findings."""
    rows = result.findings.filter(pl.col("rule") == rule)
    return dict(zip(rows["body"].to_list(), rows["severity"].to_list(), strict=True))
