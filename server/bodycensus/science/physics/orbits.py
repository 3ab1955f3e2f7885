"""Orbits: Roche limits, Hill spheres, Kepler periods, barycentres, Roche lobes, tidal locking.

Every function takes SI values and works on floats, numpy arrays and polars expressions.
"""

from __future__ import annotations

import math

from bodycensus.science.physics._ops import Num, log, power
from bodycensus.science.physics.bodies import bulk_density, surface_gravity
from bodycensus.science.units import HOUR, G

# Roche coefficients: d = c R_M (rho_M / rho_m)^(1/3).
# = 1.26; rigid sphere (Shu 1982, The Physical Universe)
RIGID_ROCHE_COEFFICIENT = 2.0 ** (1.0 / 3.0)
# fluid satellite (Roche 1849; 2.423-2.455 with rotation, Chandrasekhar)
FLUID_ROCHE_COEFFICIENT = 2.44

HILL_STABLE_SEPARATION = 2.0 * math.sqrt(3.0)  # mutual Hill radii; two planets (Gladman 1993)


def periapsis(semi_major_axis: Num, eccentricity: Num) -> Num:
    """Closest distance to the parent, a (1 - e)."""
    return semi_major_axis * (1.0 - eccentricity)


def apoapsis(semi_major_axis: Num, eccentricity: Num) -> Num:
    """Farthest distance from the parent, a (1 + e)."""
    return semi_major_axis * (1.0 + eccentricity)


def roche_limit(parent_radius: Num, density_ratio: Num, coefficient: float) -> Num:
    """Roche distance c R_M (rho_M / rho_m)^(1/3) for a given coefficient (rigid or fluid)."""
    return coefficient * parent_radius * power(density_ratio, 1.0 / 3.0)


def roche_density(parent_radius: Num, parent_density: Num, distance: Num,
                  coefficient: float) -> Num:
    """The satellite density whose Roche limit lies at ``distance``: the same relation solved
    for the density, rho_m = rho_M (c R_M / d)^3 (e.g. the material a ring's outer edge implies).
    """
    return parent_density * (coefficient * parent_radius / distance) ** 3


def roche_rigid(parent_radius: Num, parent_density: Num, body_density: Num) -> Num:
    """Rigid-body Roche limit R_M (2 rho_M / rho_m)^(1/3) (Shu 1982)."""
    return roche_limit(parent_radius, parent_density / body_density, RIGID_ROCHE_COEFFICIENT)


def roche_fluid(parent_radius: Num, parent_density: Num, body_density: Num) -> Num:
    """Fluid-body Roche limit 2.44 R_M (rho_M / rho_m)^(1/3) (Roche 1849)."""
    return roche_limit(parent_radius, parent_density / body_density, FLUID_ROCHE_COEFFICIENT)


def hill_radius(semi_major_axis: Num, eccentricity: Num, mass: Num, parent_mass: Num) -> Num:
    """Hill-sphere radius a (1 - e) (m / 3M)^(1/3) of a body about its parent."""
    return periapsis(semi_major_axis, eccentricity) * power(mass / (3.0 * parent_mass), 1.0 / 3.0)


# a_crit / r_H = c0 (1 - c_p e_p - c_s e_s), Domingos, Winter & Yokoyama 2006 (MNRAS 373, 1227):
# prograde (0.4895, 1.0305, 0.2738); retrograde (0.9309, 1.0764, 0.9812), whose ~0.93 limit
# REFERENCES.md gives and whose eccentricity coefficients are from memory.
PROGRADE_HILL_FIT = (0.4895, 1.0305, 0.2738)
RETROGRADE_HILL_FIT = (0.9309, 1.0764, 0.9812)


def stable_hill_fraction(parent_eccentricity: Num, eccentricity: Num,
                         retrograde: bool = False) -> Num:
    """Largest stable satellite orbit as a fraction of the Hill radius, prograde or retrograde:
    a_crit / r_H = c0 (1 - c_p e_p - c_s e_s) (Domingos, Winter & Yokoyama 2006)."""
    c0, c_parent, c_own = RETROGRADE_HILL_FIT if retrograde else PROGRADE_HILL_FIT
    return c0 * (1.0 - c_parent * parent_eccentricity - c_own * eccentricity)


def kepler_period(semi_major_axis: Num, parent_mass: Num, mass: Num) -> Num:
    """Orbital period 2 pi sqrt(a^3 / G (M + m)) in seconds (Kepler's third law, Newton's form)."""
    return 2.0 * math.pi * power(semi_major_axis**3 / (G * (parent_mass + mass)), 0.5)


def kepler_semi_major_axis(period: Num, parent_mass: Num, mass: Num) -> Num:
    """Semi-major axis (m) of an orbit of this period, (G (M + m) P^2 / 4 pi^2)^(1/3): Kepler's
    third law solved for a, for catalogues that give a period and a host mass but no a."""
    return power(G * (parent_mass + mass) * period**2 / (4.0 * math.pi**2), 1.0 / 3.0)


def barycentre_offset(semi_major_axis: Num, parent_mass: Num, mass: Num) -> Num:
    """Distance from the parent's centre to the pair's barycentre, a m / (M + m)."""
    return semi_major_axis * mass / (parent_mass + mass)


def roche_lobe_radius(separation: Num, mass_ratio: Num) -> Num:
    """Eggleton (1983, ApJ 268, 368) volume-equivalent Roche-lobe radius of the star with q = m/M.

    r_L / a = 0.49 q^(2/3) / (0.6 q^(2/3) + ln(1 + q^(1/3))), good to 1 % for all q.
    """
    q23 = power(mass_ratio, 2.0 / 3.0)
    return separation * 0.49 * q23 / (0.6 * q23 + log(1.0 + power(mass_ratio, 1.0 / 3.0)))


def mutual_hill_radius(inner_semi_major_axis: Num, inner_mass: Num, outer_mass: Num,
                       parent_mass: Num) -> Num:
    """Mutual Hill radius ((m1 + m2) / 3M)^(1/3) a1 of two neighbours (Gladman 1993, Icarus 106)."""
    return power((inner_mass + outer_mass) / (3.0 * parent_mass), 1.0 / 3.0) * inner_semi_major_axis


# --- tidal locking ---------------------------------------------------------------------------
INITIAL_SPIN_PERIOD = 12.0 * HOUR  # s; a common assumption (common practice, no single source)
MOMENT_OF_INERTIA_FACTOR = 0.4  # I = 0.4 m R^2, a uniform sphere


def love_number_k2(mass: Num, radius: Num, rigidity: Num) -> Num:
    """Tidal Love number k2 = 1.5 / (1 + 19 mu / (2 rho g R)) of a homogeneous elastic sphere."""
    density = bulk_density(mass, radius)
    gravity = surface_gravity(mass, radius)
    return 1.5 / (1.0 + 19.0 * rigidity / (2.0 * density * gravity * radius))


def tidal_lock_time(semi_major_axis: Num, mass: Num, radius: Num, parent_mass: Num,
                    rigidity: Num, quality_factor: Num,
                    initial_spin_period: float = INITIAL_SPIN_PERIOD) -> Num:
    """Time (s) to despin into synchronous rotation: w a^6 I Q / (3 G m_p^2 k2 R^5).

    Gladman et al. 1996 (Icarus 122, 166), after Peale 1977; I = 0.4 m R^2.
    """
    spin_rate = 2.0 * math.pi / initial_spin_period
    inertia = MOMENT_OF_INERTIA_FACTOR * mass * radius**2
    k2 = love_number_k2(mass, radius, rigidity)
    return (spin_rate * semi_major_axis**6 * inertia * quality_factor
            / (3.0 * G * parent_mass**2 * k2 * radius**5))
