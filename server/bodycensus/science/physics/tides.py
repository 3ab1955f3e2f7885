"""Tides over time: the heat a tide dissipates in an eccentric satellite, and how fast the tide a
satellite raises on its primary moves its orbit (constant-Q model).

Every function takes SI values and works on floats, numpy arrays and polars expressions.
"""

from __future__ import annotations

import math

from bodycensus.science.physics._ops import Num, power
from bodycensus.science.physics.orbits import kepler_period
from bodycensus.science.units import G

# Io's measured surface heat flow: about 1e14 W, ~2 W m-2 (1.5-3 W m-2, Veeder et al. 2012, seen in
# a secondary source; 2.5 W m-2 from Veeder et al. 1994 is from memory). 1e14 W over Io's surface
# (mean radius 1821.49 km, JPL SSD) is 2.4 W m-2.
IO_HEAT_FLUX = 2.4  # W m-2


def mean_motion(semi_major_axis: Num, parent_mass: Num, mass: Num) -> Num:
    """Mean orbital angular speed n = 2 pi / P (rad s-1), P from Kepler's third law."""
    return 2.0 * math.pi / kepler_period(semi_major_axis, parent_mass, mass)


def tidal_heating_power(semi_major_axis: Num, eccentricity: Num, mass: Num, radius: Num,
                        parent_mass: Num, k2_over_q: Num) -> Num:
    """Tidal heat (W) dissipated in a synchronous satellite on an eccentric orbit:
    E = (21/2) (k2/Q) G M_p^2 R^5 n e^2 / a^6 (Peale, Cassen & Reynolds 1979, Science 203, 892;
    Segatz et al. 1988, Icarus 75, 187), valid for small e."""
    n = mean_motion(semi_major_axis, parent_mass, mass)
    return (10.5 * k2_over_q * G * parent_mass**2 * radius**5 * n * eccentricity**2
            / semi_major_axis**6)


def circularisation_time(semi_major_axis: Num, mass: Num, radius: Num, parent_mass: Num,
                         k2_over_q: Num) -> Num:
    """e-folding time (s) of the eccentricity that the same tide damps, at constant orbital
    angular momentum: G M m e^2 / (a E) = (2/21) (Q/k2) (m/M) (a/R)^5 / n, i.e. Goldreich &
    Soter's (1966) (4/63) Q' (m/M) (a/R)^5 / n with Q' = 3Q / 2k2."""
    n = mean_motion(semi_major_axis, parent_mass, mass)
    return 2.0 / 21.0 / k2_over_q * mass / parent_mass * (semi_major_axis / radius) ** 5 / n


def surface_heat_flux(power_w: Num, radius: Num) -> Num:
    """Heat flow through the surface, P / (4 pi R^2), W m-2."""
    return power_w / (4.0 * math.pi * radius**2)


def modified_quality_factor(love_number: Num, quality_factor: Num) -> Num:
    """Q' = 3 Q / (2 k2), the modified tidal quality factor of the body that carries the tide."""
    return 3.0 * quality_factor / (2.0 * love_number)


def _decay_constant(parent_mass: Num, parent_radius: Num, mass: Num, parent_q_prime: Num) -> Num:
    """(9/2) sqrt(G / M) R^5 m / Q', the constant of da/dt = -K a^(-11/2) (m^(13/2) s-1)."""
    return 4.5 * power(G / parent_mass, 0.5) * parent_radius**5 * mass / parent_q_prime


def orbital_decay_rate(semi_major_axis: Num, parent_mass: Num, parent_radius: Num, mass: Num,
                       parent_q_prime: Num) -> Num:
    """|da/dt| (m s-1) from the tide a satellite raises on its primary, constant Q':
    da/dt = -(9/2) sqrt(G/M) R^5 (m/Q') a^(-11/2) inside the synchronous orbit (outward beyond
    it) (Jackson, Greenberg & Barnes 2008, ApJ 678, 1396; after Goldreich & Soter 1966)."""
    constant = _decay_constant(parent_mass, parent_radius, mass, parent_q_prime)
    return constant * power(semi_major_axis, -5.5)


def tidal_decay_time(semi_major_axis: Num, end: Num, parent_mass: Num, parent_radius: Num,
                     mass: Num, parent_q_prime: Num) -> Num:
    """Time (s) for a decaying orbit to shrink from ``semi_major_axis`` to ``end``: the decay
    law above integrated, (2/13) (a^(13/2) - a_end^(13/2)) / K. Negative when ``end`` > a."""
    constant = _decay_constant(parent_mass, parent_radius, mass, parent_q_prime)
    return (power(semi_major_axis, 6.5) - power(end, 6.5)) / (6.5 * constant)
