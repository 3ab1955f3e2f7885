"""Orbit placement for the demo catalogue: stable, non-crossing sequences of siblings.

Bodies arrive sorted by parent, innermost first. The innermost sits at ``edge x (1 + X)``, where
the edge is the parent's radius or the fluid Roche limit, whichever is farther, and X is a
positive log-normal draw, so the periapsis-to-Roche ratio has a smooth tail rather than a wall.
Each next sibling sits ``K`` mutual Hill radii plus a positive log-normal slack farther out
(K ~ 25, Gladman 1993 needs > 2 sqrt(3)). Eccentricities are Rayleigh draws whose width is a
small fraction of the gaps on both sides, so orbits cross about once in 10^10 draws; the rare
miss is redrawn.
"""

from __future__ import annotations

import numpy as np

from bodycensus.demo.kinds import lognormal
from bodycensus.science.physics import orbits

HILL_SPACING = (25.0, 0.15)  # mutual Hill radii: median, sigma (Kepler multis, order of magnitude)
E_FRACTION = 0.05  # Rayleigh width of e as a fraction of the narrower neighbouring gap
PERIOD_NOISE = 0.0006  # relative; keeps every period within 0.5 % of Kepler (8 sigma)


def group_starts(group: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For sorted group ids: whether each element opens its group, and its group's first index."""
    first = np.ones(len(group), dtype=bool)
    first[1:] = group[1:] != group[:-1]
    start = np.maximum.accumulate(np.where(first, np.arange(len(group)), 0))
    return first, start


def _exclusive_cumsum(x: np.ndarray, start: np.ndarray) -> np.ndarray:
    """Sum of ``x`` over the earlier elements of the same group."""
    total = np.cumsum(x) - x
    return total - total[start] if len(x) else total


def _gaps(rng: np.random.Generator, first: np.ndarray, mass: np.ndarray, parent_mass: np.ndarray,
          slack: np.ndarray) -> np.ndarray:
    """Fractional gap a_next / a - 1 from each body to the next sibling (inf for the last)."""
    n = len(mass)
    last = np.ones(n, dtype=bool)
    last[:-1] = first[1:]
    next_mass = np.append(mass[1:], 0.0)
    next_slack = np.append(slack[1:], 0.0)
    k = lognormal(rng, HILL_SPACING[0], HILL_SPACING[1], n)
    gap = k * orbits.mutual_hill_radius(np.ones(n), mass, next_mass, parent_mass) + next_slack
    return np.where(last, np.inf, gap)


def _eccentricities(rng: np.random.Generator, gap_in: np.ndarray, gap_out: np.ndarray,
                    e_cap: np.ndarray) -> np.ndarray:
    """Rayleigh eccentricities, narrower where a neighbour (or the edge) is close."""
    room = E_FRACTION * np.minimum(gap_in, gap_out)
    width = 1.0 / (1.0 / e_cap + 1.0 / room)
    return rng.rayleigh(width)


def _misses(a: np.ndarray, e: np.ndarray, edge: np.ndarray, first: np.ndarray) -> np.ndarray:
    """Bodies whose periapsis is inside the edge or whose orbit reaches the next sibling's."""
    peri, apo = orbits.periapsis(a, e), orbits.apoapsis(a, e)
    crosses = np.zeros(len(a), dtype=bool)
    crosses[1:] = ~first[1:] & (apo[:-1] >= peri[1:])
    crosses[:-1] |= crosses[1:]
    return (peri <= edge) | crosses


def place(rng: np.random.Generator, group: np.ndarray, mass: np.ndarray, density: np.ndarray,
          parent: dict[str, np.ndarray], first_gap: np.ndarray, slack: np.ndarray,
          e_cap: np.ndarray, min_edge: np.ndarray | float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """Semi-major axes (m) and eccentricities of siblings sorted by ``group``, innermost first.

    ``parent`` holds per-body ``mass``, ``radius`` and ``density`` of the parent; ``min_edge``
    is a length the edge never falls below (so tiny remnants do not pull companions in).
    """
    first, start = group_starts(group)
    own_edge = np.maximum(np.maximum(parent["radius"], min_edge),
                          orbits.roche_fluid(parent["radius"], parent["density"], density))
    edge = np.maximum.reduceat(own_edge, np.flatnonzero(first))[np.cumsum(first) - 1] \
        if len(group) else own_edge
    gap_out = _gaps(rng, first, mass, parent["mass"], slack)
    log_step = np.log1p(np.where(np.isinf(gap_out), 0.0, gap_out))
    a0 = edge * (1.0 + first_gap[start])
    a = a0 * np.exp(_exclusive_cumsum(log_step, start))
    gap_in = np.where(first, first_gap[start], np.roll(gap_out, 1))
    e = _eccentricities(rng, gap_in, gap_out, e_cap)
    for _ in range(50):
        miss = _misses(a, e, edge, first)
        if not miss.any():
            break
        e[miss] = _eccentricities(rng, gap_in[miss], gap_out[miss], e_cap[miss])
    return a, e


def edge_factor(rng: np.random.Generator, mu: float, sigma: float, n: int,
                floor: float = 0.15) -> np.ndarray:
    """X for placing the innermost sibling at edge x (1 + X): ln(1 + X) is normal (mu, sigma),
    redrawn in the rare case (callers keep it > 3.5 sigma) that it falls below ``floor``, so the
    periapsis-to-edge ratio has a smooth log-normal tail and never touches the edge."""
    def draw(m: int) -> np.ndarray:
        return mu + sigma * rng.standard_normal(m)

    y = draw(n)
    while (low := y < floor).any():
        y[low] = draw(int(low.sum()))
    return np.expm1(y)


def noisy_period(rng: np.random.Generator, a: np.ndarray, parent_mass: np.ndarray,
                 mass: np.ndarray) -> np.ndarray:
    """Kepler period (s) with a small catalogue noise (normal, 0.06 %)."""
    noise = 1.0 + PERIOD_NOISE * rng.standard_normal(len(a))
    return orbits.kepler_period(a, parent_mass, mass) * noise
