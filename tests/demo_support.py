"""Shared fixture and helpers for the demo-catalogue tests (a demo in SI numpy arrays)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import polars as pl
import pytest
from catalogue_builder import ISSUE_RULE_IDS

from bodycensus.demo import generate_demo
from bodycensus.science.families import FAMILY_PARAMETERS, guess_family
from bodycensus.science.physics import bodies
from bodycensus.science.units import AU, DAY, HOUR, M_EARTH, YEAR

N = 20_000
RULES = ISSUE_RULE_IDS
SEAGER = {"iron": "iron", "rock": "rock", "water_ice": "water_ice"}


@dataclass
class Demo:
    """The catalogue in SI numpy arrays, with parent rows and the truth."""

    catalogue: pl.DataFrame
    truth: pl.DataFrame
    si: dict[str, np.ndarray]
    parent: np.ndarray  # row of the parent, -1 for none or dangling
    clean: np.ndarray  # rows the truth does not name

    def planted_ids(self, rule: str, column: str = "body") -> list[str]:
        """Ids the truth names for ``rule``."""
        return self.truth.filter(pl.col("rule") == rule)[column].to_list()

    def planted(self, rule: str, column: str = "body") -> np.ndarray:
        """Rows of the bodies planted for ``rule`` (first row of a duplicated id)."""
        first = {v: i for i, v in reversed(list(enumerate(self.catalogue["id"].to_list())))}
        return np.array([first[i] for i in self.planted_ids(rule, column)])


def _si(cat: pl.DataFrame) -> dict[str, np.ndarray]:
    scale = {"mass (earth_mass)": ("mass", M_EARTH), "radius_km": ("radius", 1e3),
             "a (au)": ("a", AU), "e": ("e", 1.0), "period_days": ("period", DAY),
             "rotation_h": ("rotation", HOUR), "age_gyr": ("age", 1e9 * YEAR)}
    out = {name: cat[col].to_numpy().astype(float) * f for col, (name, f) in scale.items()}
    for column, name in (("ring inner [R_planet]", "ring_inner"),
                         ("ring outer [R_planet]", "ring_outer"),
                         ("ring density (kg/m3)", "ring_density")):
        out[name] = cat[column].to_numpy().astype(float)  # planet radii; kg m-3
    out["locked"] = cat["locked"].fill_null(False).to_numpy()
    out["retrograde"] = (cat["orbit_sense"] == "retrograde").fill_null(False).to_numpy()
    out["family"] = np.array([guess_family(label) for label in cat["type"].to_list()])
    out["density"] = bodies.bulk_density(out["mass"], out["radius"])
    return out


@pytest.fixture(scope="session", params=[7, 2024])
def demo(request: pytest.FixtureRequest) -> Demo:
    catalogue, truth = generate_demo(N, seed=request.param)
    ids = catalogue["id"].to_list()
    row = {v: i for i, v in reversed(list(enumerate(ids)))}
    parent = np.array([row.get(p, -1) if p else -1 for p in catalogue["orbits"].to_list()])
    named = set(truth["body"].drop_nulls()) | set(truth["other"].drop_nulls())
    clean = np.array([i not in named for i in ids])
    return Demo(catalogue, truth, _si(catalogue), parent, clean)


def orbiting(d: Demo) -> np.ndarray:
    """Clean bodies (not rings) with a clean parent."""
    return (d.clean & (d.parent >= 0) & d.clean[np.maximum(d.parent, 0)]
            & (d.si["family"] != "ring"))


def family_band(family: str, mass: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The family's density band at this mass, from families.FAMILY_PARAMETERS and physics."""
    curves = {"cold_hhe": bodies.cold_hhe_density, "white_dwarf": bodies.white_dwarf_density,
              "main_sequence": bodies.main_sequence_density,
              "largest_star": bodies.largest_star_density,
              **{k: (lambda m, k=k: bodies.composition_density(m, k)) for k in SEAGER}}
    band = FAMILY_PARAMETERS[family].density_band
    assert band is not None

    def edge(curve: str, factor: float) -> np.ndarray:
        return np.full(len(mass), factor) if curve == "const" else factor * curves[curve](mass)

    return edge(band.low_curve, band.low_factor), edge(band.high_curve, band.high_factor)
