"""Properties of a single body: density, gravity, escape speed, composition and stellar curves.

Every function takes SI values (kg, m) and works on floats, numpy arrays and polars expressions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from bodycensus.science.physics._ops import Num, clip_min, exp10, log10, power
from bodycensus.science.units import (
    G0,
    L_SUN,
    M_EARTH,
    M_JUPITER,
    M_SUN,
    R_EARTH,
    R_JUPITER,
    R_SUN,
    SPEED_OF_LIGHT,
    G,
)

# --- published limits ------------------------------------------------------------------------
CHANDRASEKHAR_MASS = 1.44 * M_SUN  # kg; Chandrasekhar 1935, mu_e = 2 (analytic 1.436)
NEUTRON_STAR_SUSPECT_MASS = 2.3 * M_SUN  # kg; heaviest measured 2.35 +/- 0.17 (Romani et al. 2022)
NEUTRON_STAR_MAX_MASS = 3.0 * M_SUN  # kg; causal upper bound (Rhoades & Ruffini 1974; memory)
HYDROGEN_BURNING_MASS = 0.075 * M_SUN  # kg; ~0.075-0.08 M_sun (Burrows & Liebert 1993)
DEUTERIUM_BURNING_MASS = 13.0 * M_JUPITER  # kg; ~13 M_jup (Spiegel, Burrows & Milsom 2011)
IRON_UNCOMPRESSED_DENSITY = 7874.0  # kg m-3; alpha iron at room conditions (CRC Handbook)
WATER_ICE_DENSITY = 917.0  # kg m-3; ice Ih at 0 C (CRC Handbook)


def sphere_volume(radius: Num) -> Num:
    """Volume of a sphere of the given radius (m3)."""
    return 4.0 / 3.0 * math.pi * radius**3


def bulk_density(mass: Num, radius: Num) -> Num:
    """Mean density M / (4/3 pi R^3), kg m-3."""
    return mass / sphere_volume(radius)


def surface_gravity(mass: Num, radius: Num) -> Num:
    """Gravitational acceleration GM/R^2 at the surface, m s-2 (no rotation)."""
    return G * mass / radius**2


def surface_gravity_g0(mass: Num, radius: Num) -> Num:
    """Surface gravity in units of standard gravity g0 = 9.80665 m s-2."""
    return surface_gravity(mass, radius) / G0


def escape_speed(mass: Num, radius: Num) -> Num:
    """Escape speed sqrt(2GM/R) from the surface, m s-1."""
    return power(2.0 * G * mass / radius, 0.5)


# --- composition curves ----------------------------------------------------------------------
@dataclass(frozen=True)
class SeagerFit:
    """Seager et al. 2007 (ApJ 669, 1279) eq. 23 fit: log10 Rs = k1 + log10(Ms)/3 - k2 Ms^k3."""

    m1: float  # M_earth
    r1: float  # R_earth
    k1: float
    k2: float
    k3: float


SEAGER_FITS: dict[str, SeagerFit] = {
    "iron": SeagerFit(5.80, 2.52, -0.20949, 0.0804, 0.394),  # Fe (epsilon)
    "rock": SeagerFit(10.55, 3.90, -0.209594, 0.0799, 0.413),  # MgSiO3 (perovskite)
    "water_ice": SeagerFit(5.52, 4.43, -0.209396, 0.0807, 0.375),  # H2O (ice VII)
}


def composition_radius(mass: Num, material: str) -> Num:
    """Radius (m) of a cold sphere of one material at this mass (Seager et al. 2007 fit).

    The fit is published for up to ~20 M_earth; beyond it the curve is an extrapolation.
    """
    fit = SEAGER_FITS[material]
    scaled_mass = mass / (fit.m1 * M_EARTH)
    log_scaled_radius = fit.k1 + log10(scaled_mass) / 3.0 - fit.k2 * power(scaled_mass, fit.k3)
    return exp10(log_scaled_radius) * fit.r1 * R_EARTH


def composition_density(mass: Num, material: str) -> Num:
    """Bulk density (kg m-3) of a cold sphere of one material at this mass (Seager et al. 2007)."""
    return bulk_density(mass, composition_radius(mass, material))


# Cold H/He spheres: radius peaks near a few Jupiter masses, then shrinks as degeneracy takes over
# (Zapolsky & Salpeter 1969; Burrows & Liebert 1993). The interpolating form
# R = 2 R_peak x^(1/3) / (1 + x^(2/3)), x = M / M_peak, goes as M^(1/3) (constant density) when
# light and as M^(-1/3) (degenerate) when heavy. R_peak and M_peak are from memory: 1.1 R_jup at
# 4 M_jup; they give Jupiter 0.99 R_jup and 70 M_jup 0.74 R_jup.
COLD_HHE_PEAK_RADIUS = 1.1 * R_JUPITER
COLD_HHE_PEAK_MASS = 4.0 * M_JUPITER


def cold_hhe_radius(mass: Num) -> Num:
    """Radius (m) of a cold hydrogen-helium sphere of this mass (approximate curve, see above)."""
    x = mass / COLD_HHE_PEAK_MASS
    return 2.0 * COLD_HHE_PEAK_RADIUS * power(x, 1.0 / 3.0) / (1.0 + power(x, 2.0 / 3.0))


def cold_hhe_density(mass: Num) -> Num:
    """Bulk density (kg m-3) of a cold hydrogen-helium sphere of this mass."""
    return bulk_density(mass, cold_hhe_radius(mass))


# --- stars -----------------------------------------------------------------------------------
NAUENBERG_M3 = 5.816 / 4.0 * M_SUN  # kg; 5.816/mu_e^2 M_sun with mu_e = 2 (Nauenberg 1972)
NAUENBERG_R0 = 0.0225 / 2.0 * R_SUN  # m; 0.0225/mu_e R_sun (Nauenberg 1972; constants from memory)


def white_dwarf_radius(mass: Num) -> Num:
    """Radius (m) of a cold white dwarf, Nauenberg 1972 (ApJ 175, 417) mass-radius relation."""
    x = clip_min(mass / NAUENBERG_M3, 1e-12)
    inside = clip_min(1.0 - power(x, 4.0 / 3.0), 0.0)
    return NAUENBERG_R0 * power(inside, 0.5) / power(x, 1.0 / 3.0)


def white_dwarf_density(mass: Num) -> Num:
    """Bulk density (kg m-3) of a cold white dwarf of this mass (Nauenberg 1972)."""
    return bulk_density(mass, white_dwarf_radius(mass))


def main_sequence_radius(mass: Num) -> Num:
    """Main-sequence radius (m), R ~ M^0.8 in solar units (textbook rule of thumb, rel 1e-1)."""
    return R_SUN * power(mass / M_SUN, 0.8)


def main_sequence_luminosity(mass: Num) -> Num:
    """Main-sequence luminosity (W), L ~ M^3.5 in solar units (textbook rule of thumb)."""
    return L_SUN * power(mass / M_SUN, 3.5)


# The largest stars measured: red supergiants reach ~1500 R_sun (Levesque et al. 2005, ApJ 628,
# 973). A star of any mass is denser than a sphere of that radius.
LARGEST_STAR_RADIUS = 1500.0 * R_SUN  # m


def largest_star_density(mass: Num) -> Num:
    """Bulk density (kg m-3) of a star of this mass swollen to the largest radius measured: the
    low edge of any non-degenerate star, giants and supergiants included."""
    return mass / sphere_volume(LARGEST_STAR_RADIUS)


def main_sequence_density(mass: Num) -> Num:
    """Bulk density (kg m-3) of a main-sequence star of this mass (from the R ~ M^0.8 rule)."""
    return bulk_density(mass, main_sequence_radius(mass))


def schwarzschild_radius(mass: Num) -> Num:
    """Event-horizon radius 2GM/c^2 (m) of a non-rotating black hole."""
    return 2.0 * G * mass / SPEED_OF_LIGHT**2

