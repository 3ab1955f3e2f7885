"""Files for the curator's browser tests: a small catalogue with odd headers, as a curator's
own export might be (no id column, a name that must also serve as the id, units in brackets),
holding the cases the tests look at, and a one-column text file that is no catalogue at all.

Invented bodies; masses and radii of the Sun, the Earth and the Moon from REFERENCES.md (JPL
SSD); the neutron stars sit above the heaviest measured (2.35 M_sun, Romani et al. 2022) and
above the causal bound (~3 M_sun, Rhoades & Ruffini 1974).
"""

from __future__ import annotations

from pathlib import Path

HEADER = "designation,kind,host,M (M_earth),R (km),a (au),P (days)"
SUN_M_EARTH = 332946.0  # M_sun / M_earth (IAU 2015 B3 nominal GM ratio)
ROWS = [
    "Tarn,yellow dwarf star,,332946,695700,,",
    "Tarn b,terrestrial world,Tarn,1,6371,1,365.25",
    # a rocky world whose mass column holds Jupiter masses: 318 x too small as Earth masses
    "Tarn c,rocky world,Tarn,0.003146,6371,1.6,",
    "Tarn b I,moon,Tarn b,0.0123,1737.4,0.00257,27.32",  # the Moon: a moon of a rock planet
    f"Vell-1,neutron star,,{3.2 * SUN_M_EARTH},12,,",
    f"Vell-2,neutron star,,{2.5 * SUN_M_EARTH},12,,",
    f"Vell-3,neutron star,,{1.4 * SUN_M_EARTH},12,,",
    *[f"Tarn {chr(100 + i)},terrestrial world,Tarn,{0.5 + 0.1 * i},"
      f"{6371 * (0.5 + 0.1 * i) ** 0.27:.1f},{2 + 0.7 * i:.2f}," for i in range(22)],
]


def odd_catalogue(folder: Path) -> Path:
    """A 29-body catalogue with odd headers and no id column."""
    path = folder / "tarn-export.csv"
    path.write_text("\n".join([HEADER, *ROWS]) + "\n", encoding="utf-8")
    return path


def names_only(folder: Path) -> Path:
    """A plain text file of one column: names, nothing physical to check."""
    path = folder / "names.txt"
    path.write_text("name\nTarn\nVell-1\nOrrin\n", encoding="utf-8")
    return path
