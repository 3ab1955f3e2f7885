"""Test support: a generator of one-label catalogues for the shift test, with a planted shift.

Each catalogue has ``n`` bodies labelled "stony world" and 4,000 "icy moon", masses log-normal
(0.3 dex) and radii log-normal on their own (0.05 dex), in Earth masses and km. ``shift_sd``
moves the stony worlds' log10 masses by that many standard deviations (0.1 = a tenth).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import polars as pl

MASS_DEX = 0.3  # standard deviation of log10(mass / M_earth)
RADIUS_DEX = 0.05


def label_catalogue(path: Path, seed: int, n: int = 10_000, shift_sd: float = 0.0) -> Path:
    """Write the catalogue CSV to ``path``; the same seed gives the same bodies."""
    rng = np.random.default_rng(seed)
    frames = []
    for label, count, centre, shift in (("stony world", n, 0.0, shift_sd * MASS_DEX),
                                        ("icy moon", 4_000, -2.0, 0.0)):
        log_mass = centre + shift + MASS_DEX * rng.standard_normal(count)
        radius = 6371.0 * 10 ** (0.27 * centre + RADIUS_DEX * rng.standard_normal(count))
        frames.append(pl.DataFrame({
            "id": [f"{label[0]}{i:06d}" for i in range(count)], "type": label,
            "mass (earth_mass)": 10 ** log_mass, "radius_km": radius}))
    pl.concat(frames).write_csv(path)
    return path
