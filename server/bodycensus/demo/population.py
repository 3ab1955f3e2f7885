"""The clean demo population: systems of stars, planets, asteroids and moons, in catalogue order.

Everything is SI (ages in years). The three generator artefacts of the demo are made here, at
draw time, the way a careless generator would make them: small asteroids are re-rolled (a hard
cutoff), ice-giant spins in a band are re-rolled (a gap), and a share of ocean worlds get one
default mass (a spike). Their physics stays consistent because sizes follow the drawn masses.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bodycensus.demo.kinds import (
    ASTEROID_DENSITY,
    ASTEROID_RADIUS_KM,
    CODE,
    HOT_GIANT_SHARE,
    MOON_CODE0,
    MOON_CURVES,
    MOON_MASS_FRACTION,
    MOON_RETROGRADE_SHARE,
    MOON_SPIN,
    PLANET_CODE0,
    PLANET_KINDS,
    QUALITY,
    RIGIDITY,
    lognormal,
)
from bodycensus.demo.orbits import edge_factor, group_starts, noisy_period, place
from bodycensus.demo.rings import add_rings
from bodycensus.demo.stars import age_seconds, redraw, systems
from bodycensus.demo.tides import damp_eccentricities, doomed_moons
from bodycensus.science.physics import bodies, orbits
from bodycensus.science.units import AU, HOUR, L_SUN, M_EARTH, M_SUN

Table = dict[str, np.ndarray]

CUTOFF_RADIUS = 6e3  # m; the generator re-rolls every asteroid smaller than this
GAP_SPIN = (13.0 * HOUR, 20.0 * HOUR)  # s; the generator re-rolls ice-giant spins in this band
SPIKE_MASS = 1.75 * M_EARTH  # kg; the default mass a share of ocean worlds is given
SPIKE_SHARE = 0.04


@dataclass(frozen=True)
class GeneratorSettings:
    """What a run of the generator may change; the defaults make the documented demo. Two runs
    with other settings differ the way a generator's weekly change would (``bodycensus compare``
    shows it): heavier gas giants shift their mass law and, through the moons' mass fraction,
    their moons'; a spike share of 0 removes the ocean worlds' default-mass spike."""

    giant_mass_factor: float = 1.0  # x the median mass of gas giants (and hot gas giants)
    spike_share: float = SPIKE_SHARE  # share of ocean worlds given the default mass SPIKE_MASS
AGE_SCATTER = 0.1  # per-body scatter of catalogued ages about their system's age
STAR_PAIR_SCALE = 0.01 * AU  # edge scale for star pairs, x (M / M_sun)^(1/3): a sun's Roche reach
PLANETS_PER_STAR = 4.5  # Poisson mean, main-sequence hosts only
EQUILIBRIUM_T_1AU = 278.6  # K; zero-albedo equilibrium temperature at 1 au from the Sun (memory)
HOT = PLANET_CODE0 + [k.label for k in PLANET_KINDS].index("hot gas giant")


def _planet_kinds(rng: np.random.Generator, sysd: Table) -> tuple[np.ndarray, np.ndarray]:
    """System index and label code of every planet-like body, sorted by system, inner first."""
    host = np.flatnonzero(sysd["hosts_planets"])
    sys = np.repeat(host, rng.poisson(PLANETS_PER_STAR, len(host)))
    shares = np.array([k.share for k in PLANET_KINDS])
    kind = rng.choice(len(PLANET_KINDS), len(sys), p=shares / shares.sum())
    rank = np.array([k.rank for k in PLANET_KINDS])[kind] + rng.standard_normal(len(sys))
    order = np.lexsort((rank, sys))
    sys, code = sys[order], kind[order] + PLANET_CODE0
    first, _ = group_starts(sys)
    code[first & (rng.random(len(sys)) < HOT_GIANT_SHARE)] = HOT
    return sys, code


def _planet_sizes(rng: np.random.Generator, code: np.ndarray, settings: GeneratorSettings
                  ) -> tuple[np.ndarray, np.ndarray]:
    """Mass (kg) and radius (m) of planet-like bodies, kind by kind."""
    mass, radius = np.empty(len(code)), np.empty(len(code))
    for i, kind in enumerate(PLANET_KINDS):
        where = np.flatnonzero(code == PLANET_CODE0 + i)
        n = len(where)
        if kind.label == "asteroid":
            r = redraw(rng, lambda m: lognormal(rng, ASTEROID_RADIUS_KM[0] * 1e3,
                                                ASTEROID_RADIUS_KM[1], m), CUTOFF_RADIUS, np.inf, n)
            rho = lognormal(rng, ASTEROID_DENSITY[0], ASTEROID_DENSITY[1], n)
            mass[where], radius[where] = rho * bodies.sphere_volume(r), r
            continue
        scale = settings.giant_mass_factor if kind.curve == "cold_hhe" else 1.0
        m = lognormal(rng, kind.mass_median * scale * M_EARTH, kind.mass_sigma, n)
        if kind.label == "ocean world":
            m[rng.random(n) < settings.spike_share] = SPIKE_MASS
        factor = lognormal(rng, kind.factor_median, kind.factor_sigma, n)
        if kind.curve == "cold_hhe":
            radius[where] = bodies.cold_hhe_radius(m) * factor
        else:  # the density is factor x the curve's, so the radius is factor^(-1/3) x the curve's
            radius[where] = bodies.composition_radius(m, kind.curve) * factor ** (-1.0 / 3.0)
        mass[where] = m
    return mass, radius


def _star_orbiters(rng: np.random.Generator, sysd: Table, settings: GeneratorSettings) -> Table:
    """Planets, asteroids and companion stars about each primary, placed on stable orbits."""
    sys, code = _planet_kinds(rng, sysd)
    mass, radius = _planet_sizes(rng, code, settings)
    pair = np.flatnonzero(sysd["c_code"] >= 0)
    t: Table = {"sys": np.concatenate([sys, pair]),
                "code": np.concatenate([code, sysd["c_code"][pair]]),
                "mass": np.concatenate([mass, sysd["c_mass"][pair]]),
                "radius": np.concatenate([radius, sysd["c_radius"][pair]]),
                "temp": np.concatenate([np.full(len(sys), np.nan), sysd["c_temp"][pair]]),
                "lum": np.concatenate([np.full(len(sys), np.nan), sysd["c_lum"][pair]])}
    order = np.argsort(t["sys"], kind="stable")  # companions stay last in their system
    t = {k: v[order] for k, v in t.items()}
    star = t["code"] < PLANET_CODE0
    n = len(star)
    # A companion star alone with its primary sits anywhere from tenths of an au to tens of au
    # (the floor keeps it well inside its Roche lobe); one beyond planets, a few times farther.
    first_gap = np.where(star, edge_factor(rng, 4.7, 1.1, n, floor=1.0),
                         np.where(t["code"] == HOT, edge_factor(rng, 1.5, 0.4, n),
                                  edge_factor(rng, 2.6, 0.65, n)))
    slack = np.where(star, lognormal(rng, 3.0, 0.8, n), lognormal(rng, 0.25, 0.5, n))
    parent = _parent_of(sysd, t["sys"])
    stellar_scale = np.where(star, STAR_PAIR_SCALE * (parent["mass"] / M_SUN) ** (1 / 3), 0.0)
    t["a"], t["e"] = place(rng, t["sys"], t["mass"], bodies.bulk_density(t["mass"], t["radius"]),
                           parent, first_gap, slack, np.where(star, 0.15, 0.06), stellar_scale)
    t["parent_mass"] = parent["mass"]
    return t


def _parent_of(table: Table, index: np.ndarray) -> Table:
    """Mass, radius and density of the parent rows ``index`` of ``table``."""
    mass, radius = table["mass"][index], table["radius"][index]
    return {"mass": mass, "radius": radius, "density": bodies.bulk_density(mass, radius)}


def _moon_counts(rng: np.random.Generator, orb: Table, room_limit: np.ndarray) -> np.ndarray:
    """Moons per orbiter: Poisson, fewer where the room between Roche limit and Hill limit is small.
    """
    mean = np.zeros(len(orb["code"]))
    planet = (orb["code"] >= PLANET_CODE0) & (orb["code"] < MOON_CODE0)
    mean[planet] = np.array([k.moons for k in PLANET_KINDS])[orb["code"][planet] - PLANET_CODE0]
    own = _parent_of(orb, np.arange(len(mean)))
    water = np.full(len(mean), 1000.0)  # kg m-3: the lightest moon the room is judged for
    edge = np.maximum(own["radius"], orbits.roche_fluid(own["radius"], own["density"], water))
    room = np.log(room_limit / (4.0 * edge))
    return rng.poisson(mean * (1.0 - np.exp(-np.clip(room, 0.0, None) / 2.0)))


def _moons(rng: np.random.Generator, orb: Table) -> Table:
    """Moons of the planets, between the fluid Roche limit and 0.6 x the stable Hill limit."""
    hill = orbits.hill_radius(orb["a"], orb["e"], orb["mass"], orb["parent_mass"])
    limit = 0.6 * orbits.stable_hill_fraction(orb["e"], np.full(len(hill), 0.1)) * hill
    host = np.repeat(np.arange(len(orb["a"])), _moon_counts(rng, orb, limit))
    giant = np.isin(orb["code"][host], [CODE["gas giant"], CODE["ice giant"], HOT])
    icy = rng.random(len(host)) < np.where(giant, 0.65, 0.2)
    median, slope, sigma = MOON_MASS_FRACTION
    planet_mass = orb["mass"][host]
    mass = planet_mass * lognormal(rng, median * (planet_mass / M_EARTH) ** slope, sigma, len(host))
    radius = np.empty(len(host))
    for flag, (curve, median, sigma) in zip((False, True), MOON_CURVES, strict=True):
        w = icy == flag
        radius[w] = bodies.composition_radius(mass[w], curve) \
            * lognormal(rng, median, sigma, int(w.sum())) ** (-1.0 / 3.0)
    n = len(host)
    parent = _parent_of(orb, host)
    a, e = place(rng, host, mass, bodies.bulk_density(mass, radius), parent,
                 edge_factor(rng, 1.7, 0.4, n), lognormal(rng, 0.3, 0.5, n), np.full(n, 0.03))
    keep = orbits.apoapsis(a, e) < limit[host]
    t = {"host": host, "code": MOON_CODE0 + icy.astype(int), "mass": mass, "radius": radius,
         "a": a, "e": e, "parent_mass": parent["mass"]}
    return {k: v[keep] for k, v in t.items()}


STAR_SPIN_H = {"brown dwarf": (5.0, 0.4), "white dwarf": (30.0, 1.0),
               "neutron star": (1.5e-4, 1.0)}  # h: median, sigma; main-sequence stars below
MAIN_SEQUENCE_SPIN_H = (480.0, 0.5)


def _free_spin(rng: np.random.Generator, code: np.ndarray) -> np.ndarray:
    """Primordial rotation periods (s) by kind, before any tidal despinning."""
    median = np.full(len(code), MAIN_SEQUENCE_SPIN_H[0])
    sigma = np.full(len(code), MAIN_SEQUENCE_SPIN_H[1])
    for label, (m, s) in STAR_SPIN_H.items():
        median[code == CODE[label]], sigma[code == CODE[label]] = m, s
    for i, kind in enumerate(PLANET_KINDS):
        median[code == PLANET_CODE0 + i], sigma[code == PLANET_CODE0 + i] = \
            kind.spin_median_h, kind.spin_sigma
    median[code >= MOON_CODE0], sigma[code >= MOON_CODE0] = MOON_SPIN
    spin = lognormal(rng, median * HOUR, sigma, len(code))
    spin[code == CODE["black hole"]] = np.nan
    return spin


def _despin_fraction(t: Table) -> np.ndarray:
    """How far tides have slowed each orbiting body toward its orbital period: age / despin time
    (Gladman et al. 1996), capped at 1 (locked); 0 for stars and bodies without an orbit."""
    orbiting = (t["code"] >= PLANET_CODE0) & np.isfinite(t["a"])
    with np.errstate(invalid="ignore"):
        t_lock = orbits.tidal_lock_time(t["a"], t["mass"], t["radius"], t["parent_mass"],
                                        RIGIDITY[t["code"]], QUALITY[t["code"]])
        fraction = np.clip(age_seconds(t["age"]) / t_lock, 0.0, 1.0)
    return np.where(orbiting, np.nan_to_num(fraction), 0.0)


def _spin(rng: np.random.Generator, t: Table) -> tuple[np.ndarray, np.ndarray]:
    """Rotation periods (s) and lock flags. Partly despun bodies sit between their primordial
    spin and their orbital period (in log), so locked and free spins join smoothly; ice-giant
    spins in the generator's gap band are re-rolled."""
    w = _despin_fraction(t)
    period = np.where(w > 0, t["period"], 1.0)
    free = _free_spin(rng, t["code"])
    ice = t["code"] == CODE["ice giant"]
    for attempt in range(1000):
        spin = free ** (1.0 - w) * period**w
        bad = ice & (spin >= GAP_SPIN[0] * 0.9999) & (spin <= GAP_SPIN[1] * 1.0001)  # rounding
        if not bad.any():
            return np.where(w >= 1.0, t["period"], spin), w >= 1.0
        free[bad] = _free_spin(rng, t["code"][bad])
        if attempt == 20:  # nearly despun into the band: the generator keeps the free spin
            w[bad] = 0.0
    raise RuntimeError("could not keep ice-giant spins out of the gap band")


def _stack(sysd: Table, orb: Table, moon: Table) -> Table:
    """One table of stars, then orbiters, then moons, with parent row indices and sort keys."""
    s, o, m = len(sysd["code"]), len(orb["code"]), len(moon["code"])
    nan = np.full
    t: Table = {
        "code": np.concatenate([sysd["code"], orb["code"], moon["code"]]),
        "sys": np.concatenate([np.arange(s), orb["sys"], orb["sys"][moon["host"]]]),
        "parent": np.concatenate([nan(s, -1), orb["sys"], s + moon["host"]]),
        "tier": np.repeat([0, 1, 2], [s, o, m]),
        "sub": np.concatenate([np.zeros(s, int), np.arange(o), np.arange(m)]),
    }
    for key in ("mass", "radius"):
        t[key] = np.concatenate([sysd[key], orb[key], moon[key]])
    for key in ("a", "e", "parent_mass"):
        t[key] = np.concatenate([nan(s, np.nan), orb[key], moon[key]])
    for key in ("temp", "lum"):
        t[key] = np.concatenate([sysd[key], orb[key], nan(m, np.nan)])
    return t


def _finish(rng: np.random.Generator, t: Table, sysd: Table) -> Table:
    """Ages, periods, temperatures, spins and lock flags of every row."""
    n = len(t["code"])
    t["age"] = sysd["age"][t["sys"]] * lognormal(rng, 1.0, AGE_SCATTER, n)
    t["period"] = noisy_period(rng, t["a"], t["parent_mass"], t["mass"])
    planet = (t["code"] >= PLANET_CODE0) & (t["tier"] == 1)
    host_lum = sysd["lum"][t["sys"]]
    t["temp"] = np.where(planet, EQUILIBRIUM_T_1AU * (host_lum / L_SUN) ** 0.25
                         * (AU / t["a"]) ** 0.5 * lognormal(rng, 1.0, 0.05, n), t["temp"])
    moon = t["tier"] == 2
    t["temp"][moon] = t["temp"][t["parent"][moon]] * lognormal(rng, 1.0, 0.05, int(moon.sum()))
    t["rotation"], t["locked"] = _spin(rng, t)
    return t


def _tides_and_rings(rng: np.random.Generator, t: Table) -> Table:
    """Orbit senses, tidally damped eccentricities, no moon that tides would have brought down,
    and rings, drawn from their own stream ``rng`` (so the rest of the population does not
    change with them)."""
    moon = t["tier"] == 2
    t["retrograde"] = moon & (rng.random(len(moon)) < MOON_RETROGRADE_SHARE)
    damp_eccentricities(rng, t)
    keep = ~doomed_moons(t)  # moons: nothing orbits them, so parents keep their place
    new_index = np.cumsum(keep) - 1
    t = {k: v[keep] for k, v in t.items()}
    t["parent"] = np.where(t["parent"] >= 0, new_index[np.maximum(t["parent"], 0)], -1)
    return add_rings(rng, t)


def population(rng: np.random.Generator, n_systems: int,
               settings: GeneratorSettings | None = None) -> Table:
    """The clean population of ``n_systems`` systems, sorted system by system (star, orbiters by
    distance, moons by planet and distance, rings); ``parent`` is a row index (-1 for none)."""
    side = rng.spawn(1)[0]  # its own stream: spawning leaves ``rng``'s draws as they were
    sysd = systems(rng, n_systems)
    orb = _star_orbiters(rng, sysd, settings or GeneratorSettings())
    t = _tides_and_rings(side, _finish(rng, _stack(sysd, orb, _moons(rng, orb)), sysd))
    order = np.lexsort((t["sub"], t["tier"], t["sys"]))
    new_index = np.empty_like(order)
    new_index[order] = np.arange(len(order))
    t = {k: v[order] for k, v in t.items()}
    t["parent"] = np.where(t["parent"] >= 0, new_index[np.maximum(t["parent"], 0)], -1)
    return t
