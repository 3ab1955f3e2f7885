"""Rings of the demo's giants: half as rows of their own (the ring family, tier 3, parent = the
planet), half as ring columns of the planet's row; edges in radii of the planet.

The inner edge sits just above the planet; the outer edge well inside the fluid Roche limit of
the ring's material (solid ice when the catalogue leaves it out, as the rules assume) and inside
the planet's innermost moon, so a clean ring breaks no rule.
"""

from __future__ import annotations

import numpy as np

from bodycensus.demo.kinds import (
    RING_AS_BODY,
    RING_CODE,
    RING_INNER,
    RING_MATERIAL,
    RING_MATERIAL_SHARE,
    RING_OUTER,
    RING_SHARE,
    RINGED_LABELS,
    codes,
    lognormal,
)
from bodycensus.science.physics import bodies, orbits

Table = dict[str, np.ndarray]
RING_FIELDS = ("ring_inner", "ring_outer", "ring_density")
AGE_SCATTER = 0.1  # as the population's per-body ages


def _innermost_moon(t: Table) -> np.ndarray:
    """Per row, the periapsis of the innermost body orbiting it (inf when none does)."""
    out = np.full(len(t["code"]), np.inf)
    orbiting = np.flatnonzero((t["parent"] >= 0) & np.isfinite(t["a"]))
    np.minimum.at(out, t["parent"][orbiting], orbits.periapsis(t["a"][orbiting],
                                                               t["e"][orbiting]))
    return out


def _edges(rng: np.random.Generator, t: Table) -> tuple[np.ndarray, ...]:
    """Which rows carry a ring, and its inner and outer edge (planet radii) and material."""
    n = len(t["code"])
    ringed = (t["tier"] == 1) & np.isin(t["code"], codes(*RINGED_LABELS))
    ringed &= rng.random(n) < RING_SHARE
    material = np.where(rng.random(n) < RING_MATERIAL_SHARE,
                        lognormal(rng, RING_MATERIAL[0], RING_MATERIAL[1], n), np.nan)
    density = bodies.bulk_density(t["mass"], t["radius"])
    limit = orbits.roche_fluid(t["radius"], density,
                               np.nan_to_num(material, nan=bodies.WATER_ICE_DENSITY))
    inner = np.maximum(lognormal(rng, RING_INNER[0], RING_INNER[1], n), 1.1)
    outer = np.minimum(lognormal(rng, RING_OUTER[0], RING_OUTER[1], n) * limit,
                       0.9 * _innermost_moon(t)) / t["radius"]
    with np.errstate(invalid="ignore"):
        ringed &= outer > 1.15 * inner
    return ringed, inner, outer, material


def add_rings(rng: np.random.Generator, t: Table) -> Table:
    """The table with ring columns on some giants and ring rows appended for others."""
    ringed, inner, outer, material = _edges(rng, t)
    as_body = ringed & (rng.random(len(ringed)) < RING_AS_BODY)
    columns = ringed & ~as_body
    for key, value in zip(RING_FIELDS, (inner, outer, material), strict=True):
        t[key] = np.where(columns, value, np.nan)
    host = np.flatnonzero(as_body)
    r = len(host)
    rows: Table = {key: np.full(r, np.nan) for key in t}
    rows.update(
        code=np.full(r, RING_CODE), sys=t["sys"][host], parent=host, tier=np.full(r, 3),
        sub=np.arange(r), locked=np.zeros(r, dtype=bool), retrograde=np.zeros(r, dtype=bool),
        age=t["age"][host] * lognormal(rng, 1.0, AGE_SCATTER, r),
        ring_inner=inner[host], ring_outer=outer[host], ring_density=material[host])
    return {key: np.concatenate([t[key], rows[key].astype(t[key].dtype)]) for key in t}
