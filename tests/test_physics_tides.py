"""Reference tests for physics/tides.py: Io's heat, Phobos' decay, WASP-12b's inspiral.

Sources beside each check; "from memory" = recalled, not re-checked; "computed" = worked here.
Constants from astropy (CODATA 2022 G, IAU 2015 B3 nominal masses and radii).
"""

from __future__ import annotations

import math

import astropy.constants as const
import astropy.units as u
import pytest
from scipy.integrate import quad
from three_forms import assert_three_forms

from bodycensus.science.physics import orbits, tides

KM = 1e3
YEAR = u.yr.to(u.s)  # Julian year
G = const.G.si.value

# JPL SSD (REFERENCES.md): mass kg, mean radius m, density; JPL mean elements: a m.
JUPITER_MASS = 1898.187e24
IO = {"mass": 8.9296e22, "radius": 1821.49 * KM, "a": 421_800 * KM, "e": 0.0041}  # e: memory
MARS = {"mass": 0.641712e24, "radius": 3389.50 * KM, "density": 3934.0}
PHOBOS = {"mass": 1.06e16, "a": 9_376 * KM, "density": 1872.0}
ROCK_RIGIDITY, ROCK_Q = 3e10, 100.0  # families.py "rock" (Gladman et al. 1996; Q common practice)

# WASP-12b: planet 1.41 M_jup, a = 0.0229 au, P = 1.09 d, age 2 +/- 1 Gyr (Hebb et al. 2009, ApJ
# 693, 1920, as quoted by Maciejewski et al. 2011, A&A 528, A65); star 1.35 M_sun, 1.57 R_sun
# (Hebb et al. 2009, from memory; Kepler's law with a and P gives 1.345 M_sun, computed).
# Yee et al. 2020 (ApJL 888, L5; abstract): dP/dt = -29 +/- 2 ms/yr, P/|dP/dt| = 3.25 +/- 0.23
# Myr, modified stellar quality factor Q'_* = 1.8e5.
WASP12 = {"star_mass": 1.35 * const.M_sun.si.value, "star_radius": 1.57 * const.R_sun.si.value,
          "planet_mass": 1.41 * const.M_jup.si.value, "a": 0.0229 * const.au.si.value}
YEE_Q_PRIME, YEE_PDOT_MS_PER_YR, YEE_DECAY_MYR = 1.8e5, 29.0, 3.25


def test_io_heat_with_its_measured_k2_over_q_is_its_observed_heat_flow() -> None:
    # Lainey et al. 2009 (Nature 459, 957): Io's k2/Q = 0.015 +/- 0.003 from astrometry, "in good
    # agreement with the observed surface heat flow". Observed: ~1e14 W, 1.5-3 W/m2 (Veeder et
    # al. 2012, as quoted by a secondary source; REFERENCES.md: "about 1e14 W, about 2 W m-2").
    power = tides.tidal_heating_power(IO["a"], IO["e"], IO["mass"], IO["radius"], JUPITER_MASS,
                                      0.015)
    flux = tides.surface_heat_flux(power, IO["radius"])
    assert power == pytest.approx(1e14, rel=0.2)  # computed: 9.3e13 W
    assert 1.5 < flux < 3.0  # computed: 2.2 W/m2


def test_io_limit_is_io_observed_heat_over_its_surface() -> None:
    # 1e14 W (REFERENCES.md) over 4 pi (1821.49 km)^2 (JPL SSD) = 2.4 W/m2 (computed).
    area = 4 * math.pi * (IO["radius"] * u.m) ** 2
    assert tides.IO_HEAT_FLUX == pytest.approx((1e14 * u.W / area).to_value(u.W / u.m**2),
                                               rel=1e-2)


def test_io_with_family_parameters_is_far_below_its_measured_heat() -> None:
    # A homogeneous elastic rock sphere (k2 = 0.058) with Q = 100 dissipates ~26x less than Io's
    # measured k2/Q (0.015) implies: the family model is conservative (computed), which is why
    # the tidal-heating note uses Io's measured flux as its limit.
    k2 = orbits.love_number_k2(IO["mass"], IO["radius"], ROCK_RIGIDITY)
    assert k2 == pytest.approx(0.058, rel=2e-2)
    modelled = tides.tidal_heating_power(IO["a"], IO["e"], IO["mass"], IO["radius"],
                                         JUPITER_MASS, k2 / ROCK_Q)
    assert 0.015 / (k2 / ROCK_Q) == pytest.approx(26, rel=0.05)
    assert tides.surface_heat_flux(modelled, IO["radius"]) < 0.1 * tides.IO_HEAT_FLUX


def test_heating_grows_with_eccentricity_squared_and_falls_with_a_to_the_15_2() -> None:
    # E ~ e^2 n / a^6 with n ~ a^(-3/2) (Peale, Cassen & Reynolds 1979).
    base = tides.tidal_heating_power(IO["a"], 0.01, IO["mass"], IO["radius"], JUPITER_MASS, 0.01)
    assert tides.tidal_heating_power(IO["a"], 0.02, IO["mass"], IO["radius"], JUPITER_MASS,
                                     0.01) == pytest.approx(4 * base, rel=1e-12)
    farther = tides.tidal_heating_power(2 * IO["a"], 0.01, IO["mass"], IO["radius"],
                                        JUPITER_MASS, 0.01)
    assert farther == pytest.approx(base * 2**-7.5, rel=1e-6)  # m << M: n ~ a^(-3/2)


def test_circularisation_time_is_the_heating_at_constant_angular_momentum() -> None:
    # With a(1 - e^2) fixed, dE_orb/dt = -E gives tau_e = e / |de/dt| = G M m e^2 / (a E)
    # (computed), Goldreich & Soter's (4/63) Q' (m/M) (a/R)^5 / n with Q' = 3Q/2k2 (from memory).
    k2_over_q, e = 0.015, 0.0041
    heat = tides.tidal_heating_power(IO["a"], e, IO["mass"], IO["radius"], JUPITER_MASS,
                                     k2_over_q)
    energy_route = G * JUPITER_MASS * IO["mass"] * e**2 / (IO["a"] * heat)
    tau = tides.circularisation_time(IO["a"], IO["mass"], IO["radius"], JUPITER_MASS, k2_over_q)
    assert tau == pytest.approx(energy_route, rel=1e-3)  # n with M + m versus M alone
    q_prime = 3 / (2 * k2_over_q)
    n = tides.mean_motion(IO["a"], JUPITER_MASS, IO["mass"])
    textbook = 4 / 63 * q_prime * IO["mass"] / JUPITER_MASS * (IO["a"] / IO["radius"]) ** 5 / n
    assert tau == pytest.approx(textbook, rel=1e-12)
    # Io, at its measured k2/Q: 1.5e5 yr (computed), so its eccentricity must be forced (by the
    # Laplace resonance with Europa and Ganymede) to survive.
    assert tau / YEAR == pytest.approx(1.5e5, rel=0.05)


def _mars_q_prime() -> float:
    k2 = orbits.love_number_k2(MARS["mass"], MARS["radius"], ROCK_RIGIDITY)
    return tides.modified_quality_factor(k2, ROCK_Q)


def test_phobos_reaches_the_rigid_roche_limit_in_a_few_tens_of_myr() -> None:
    # Black & Mittal 2015 (Nature Geoscience 8, 913; abstract): Phobos' weakest material disperses
    # in 20-40 Myr; 30-50 Myr until it breaks up or hits Mars (from memory). Computed with the
    # rock family's parameters (Mars k2 = 0.22, Q = 100, Q' = 670): 30 Myr to 5,470 km.
    end = orbits.roche_rigid(MARS["radius"], MARS["density"], PHOBOS["density"])
    assert end / KM == pytest.approx(5_470, rel=1e-2)
    years = tides.tidal_decay_time(PHOBOS["a"], end, MARS["mass"], MARS["radius"],
                                   PHOBOS["mass"], _mars_q_prime()) / YEAR
    assert 20e6 < years < 50e6


def test_decay_time_is_the_decay_rate_integrated() -> None:
    # Independent oracle: integrate dt = da / |da/dt| numerically (scipy) from the Roche limit out
    # to Phobos' orbit; the closed form (2/13)(a^6.5 - a_end^6.5) / K must agree.
    q_prime, end = _mars_q_prime(), 5_470 * KM

    def seconds_per_metre(a: float) -> float:
        return 1.0 / tides.orbital_decay_rate(a, MARS["mass"], MARS["radius"], PHOBOS["mass"],
                                              q_prime)

    numeric, _ = quad(seconds_per_metre, end, PHOBOS["a"], epsrel=1e-10)
    closed = tides.tidal_decay_time(PHOBOS["a"], end, MARS["mass"], MARS["radius"],
                                    PHOBOS["mass"], q_prime)
    assert closed == pytest.approx(numeric, rel=1e-8)


def test_decay_rate_has_the_constant_q_form() -> None:
    # da/dt = 3 (k2/Q) (m/M) (R/a)^5 n a (Goldreich & Soter 1966) equals (9/2) sqrt(G/M) R^5
    # (m/Q') a^(-11/2) with Q' = 3Q/(2 k2) (Jackson, Greenberg & Barnes 2008): astropy's G.
    k2, q = 0.2, 90.0
    n = math.sqrt(G * MARS["mass"] / PHOBOS["a"] ** 3)
    textbook = 3 * k2 / q * PHOBOS["mass"] / MARS["mass"] * (MARS["radius"] / PHOBOS["a"]) ** 5 \
        * n * PHOBOS["a"]
    ours = tides.orbital_decay_rate(PHOBOS["a"], MARS["mass"], MARS["radius"], PHOBOS["mass"],
                                    tides.modified_quality_factor(k2, q))
    assert ours == pytest.approx(textbook, rel=1e-9)


def _wasp12_period_change() -> tuple[float, float]:
    """WASP-12b's period (s) and dP/dt (s/s) from the decay law with Yee et al.'s Q'_*."""
    w = WASP12
    period = orbits.kepler_period(w["a"], w["star_mass"], w["planet_mass"])
    rate = tides.orbital_decay_rate(w["a"], w["star_mass"], w["star_radius"], w["planet_mass"],
                                    YEE_Q_PRIME)
    return period, 1.5 * period * rate / w["a"]  # P ~ a^(3/2)


def test_wasp12b_period_decay_matches_the_measured_one() -> None:
    # Computed: 24 ms/yr and P/|dP/dt| = 3.9 Myr, against the measured 29 +/- 2 ms/yr and 3.25 Myr
    # (Yee et al. 2020); the stellar radius (from memory) enters as R^5.
    period, pdot = _wasp12_period_change()
    assert period / 86_400 == pytest.approx(1.09, rel=1e-2)  # Hebb et al. 2009
    assert pdot * YEAR * 1e3 == pytest.approx(YEE_PDOT_MS_PER_YR, rel=0.25)
    assert period / pdot / YEAR / 1e6 == pytest.approx(YEE_DECAY_MYR, rel=0.25)


def test_wasp12b_inspiral_time_matches_the_published_decay_timescale() -> None:
    # With a constant Q', the time left to reach the star is (2/13) a/|da/dt| = (3/13) P/|dP/dt|
    # when a_end << a: (3/13) x 3.25 Myr = 0.75 Myr from the published timescale (computed),
    # against 0.89 Myr from the published parameters to contact with the star's surface.
    w = WASP12
    years = tides.tidal_decay_time(w["a"], w["star_radius"], w["star_mass"], w["star_radius"],
                                   w["planet_mass"], YEE_Q_PRIME) / YEAR
    assert years == pytest.approx(3 / 13 * YEE_DECAY_MYR * 1e6, rel=0.25)
    # Hebb et al. 2009 put the system at 2 +/- 1 Gyr: a snapshot in its last ~0.05 %.
    assert years / 2e9 < 0.01


def test_modified_quality_factor_of_jupiter() -> None:
    # Lainey et al. 2009: Jupiter's k2/Q = (1.102 +/- 0.203)e-5, so Q' = 3/(2 k2/Q) = 1.4e5.
    assert tides.modified_quality_factor(1.102e-5, 1.0) == pytest.approx(1.361e5, rel=1e-3)


@pytest.mark.parametrize("formula", [tides.mean_motion, tides.orbital_decay_rate,
                                     tides.tidal_heating_power, tides.tidal_decay_time,
                                     tides.circularisation_time])
def test_formulas_agree_on_floats_numpy_and_polars(formula: object) -> None:
    columns = {
        tides.mean_motion: {"a": [4.2e8, 9.4e6], "m_p": [1.9e27, 6.4e23], "m": [8.9e22, 1e16]},
        tides.orbital_decay_rate: {"a": [9.4e6, 3.4e9], "m_p": [6.4e23, 2.7e30],
                                   "r_p": [3.4e6, 1.1e9], "m": [1e16, 2.7e27],
                                   "q": [670.0, 1.8e5]},
        tides.tidal_heating_power: {"a": [4.2e8, 6.7e8], "e": [0.0041, 0.009],
                                    "m": [8.9e22, 4.8e22], "r": [1.8e6, 1.56e6],
                                    "m_p": [1.9e27, 1.9e27], "k2q": [0.015, 1e-3]},
        tides.circularisation_time: {"a": [4.2e8, 6.7e8], "m": [8.9e22, 4.8e22],
                                     "r": [1.8e6, 1.56e6], "m_p": [1.9e27, 1.9e27],
                                     "k2q": [0.015, 1e-3]},
        tides.tidal_decay_time: {"a": [9.4e6, 3.4e9], "end": [5.5e6, 1.1e9],
                                 "m_p": [6.4e23, 2.7e30], "r_p": [3.4e6, 1.1e9],
                                 "m": [1e16, 2.7e27], "q": [670.0, 1.8e5]},
    }[formula]  # type: ignore[index]
    assert_three_forms(formula, columns)  # type: ignore[arg-type]
