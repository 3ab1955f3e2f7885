"""The bookkeeping of planting defects in the demo population: picking targets, recording truth.

Every planted defect goes into its own system, so no two defects interact, and each records
its rule, the body, and for pair rules the partner body, as the ground truth.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bodycensus.demo.kinds import (
    MOON_CODE0,
    PLANET_CODE0,
    QUALITY,
    RIGIDITY,
    RING_CODE,
    lognormal,
)
from bodycensus.demo.stars import age_seconds
from bodycensus.science.physics import orbits

Table = dict[str, np.ndarray]


@dataclass
class Planter:
    """The population being spoiled, the systems already used, and the truth so far."""

    rng: np.random.Generator
    t: Table
    per_rule: int
    used: np.ndarray = field(init=False)  # per system: already holds a defect
    children: np.ndarray = field(init=False)  # per row: number of bodies orbiting it
    truth: list[tuple[str, int, int]] = field(default_factory=list)  # rule, row, partner row
    bad_cells: dict[int, str] = field(default_factory=dict)  # row -> unreadable temperature text
    orphans: list[int] = field(default_factory=list)  # rows whose parent id names nobody
    duplicates: dict[int, int] = field(default_factory=dict)  # row -> row whose id it takes

    def __post_init__(self) -> None:
        self.used = np.zeros(int(self.t["sys"].max()) + 1, dtype=bool)
        parent = self.t["parent"]
        self.children = np.bincount(parent[parent >= 0], minlength=len(parent))

    # --- masks -----------------------------------------------------------------------------
    def is_code(self, *labels_codes: int) -> np.ndarray:
        """Rows whose label code is one of ``labels_codes``."""
        return np.isin(self.t["code"], labels_codes)

    def planets(self) -> np.ndarray:
        """Planet-like rows orbiting a star (not companions, not moons)."""
        code = self.t["code"]
        return (code >= PLANET_CODE0) & (code < MOON_CODE0)

    def sole_moons(self) -> np.ndarray:
        """Moons that are the only body orbiting their planet."""
        parent = np.maximum(self.t["parent"], 0)
        code = self.t["code"]
        return (code >= MOON_CODE0) & (code != RING_CODE) & (self.children[parent] == 1)

    def leaves(self) -> np.ndarray:
        """Rows nothing orbits."""
        return self.children == 0

    # --- picking and recording -------------------------------------------------------------
    def pick(self, mask: np.ndarray, count: int | None = None) -> np.ndarray:
        """Up to ``count`` (default: per_rule) rows of ``mask``, each in a different unused system.
        """
        count = self.per_rule if count is None else count
        candidates = self.rng.permutation(np.flatnonzero(mask & ~self.used[self.t["sys"]]))
        candidates = candidates[: max(1000, 50 * count)]  # plenty of distinct systems, cheaply
        _, first = np.unique(self.t["sys"][candidates], return_index=True)
        chosen = np.sort(candidates[np.sort(first)][:count])
        self.used[self.t["sys"][chosen]] = True
        return chosen

    def record(self, rule: str, rows: np.ndarray, partners: np.ndarray | None = None) -> None:
        """Add truth rows for ``rule``."""
        partners = np.full(len(rows), -1) if partners is None else partners
        self.truth.extend((rule, int(r), int(p)) for r, p in zip(rows, partners, strict=True))

    # --- keeping the physics consistent after an edit -------------------------------------
    def parent_of(self, rows: np.ndarray, key: str) -> np.ndarray:
        """A column's value at the parent of each row."""
        return self.t[key][self.t["parent"][rows]]

    def refresh_orbit(self, rows: np.ndarray) -> None:
        """Recompute the Kepler period and the lock state of edited orbiting rows."""
        t = self.t
        parent_mass = self.parent_of(rows, "mass")
        t["parent_mass"][rows] = parent_mass
        t["period"][rows] = orbits.kepler_period(t["a"][rows], parent_mass, t["mass"][rows])
        code = t["code"][rows]
        t_lock = orbits.tidal_lock_time(t["a"][rows], t["mass"][rows], t["radius"][rows],
                                        parent_mass, RIGIDITY[code], QUALITY[code])
        locked = (code >= PLANET_CODE0) & (t_lock < age_seconds(t["age"][rows]))
        spin = np.where(t["locked"][rows], lognormal(self.rng, 20.0 * 3600.0, 0.5, len(rows)),
                        t["rotation"][rows])
        t["rotation"][rows] = np.where(locked, t["period"][rows], spin)
        t["locked"][rows] = locked
