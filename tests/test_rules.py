"""Every rule id: one body that must fire and one near the limit that must not.

Each check names the published source of the limit it tests. Bodies are synthetic with a known
answer; they run through the real engine (derive -> rules) via ``check_table``.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import polars as pl
import pytest
from catalogue_builder import EARTH_LIKE, ISSUE_RULE_IDS, SUN_LIKE, fired, run

from bodycensus.engines.local import CheckOptions, check_file
from bodycensus.science.families import FAMILIES
from bodycensus.science.physics import bodies, orbits
from bodycensus.science.physics.orbits import kepler_period
from bodycensus.science.rules import RULE_IDS, all_rules
from bodycensus.science.severity import SEVERITIES
from bodycensus.science.units import AU, M_EARTH, M_JUPITER, M_SUN, R_EARTH, R_JUPITER, R_SUN

EXPECTED_IDS = set(ISSUE_RULE_IDS)


def moon(body_id: str, a: float, mass: float = 1e20, radius: float = 2e5, **extra) -> dict:
    """A rocky moon of the Earth-like planet P."""
    return {"id": body_id, "label": "rocky moon", "family": "rock", "parent": "P", "mass": mass,
            "radius": radius, "semi_major_axis": a, "eccentricity": 0.0, **extra}


def test_registry_has_every_rule_once_with_source_and_known_words() -> None:
    assert set(RULE_IDS) == EXPECTED_IDS and len(RULE_IDS) == len(EXPECTED_IDS)
    for rule in all_rules():
        assert rule.source and rule.title
        assert rule.severity in SEVERITIES
        assert rule.families is None or rule.families <= set(FAMILIES)


def test_clean_pair_has_no_finding_but_the_expected(tmp_path: Path) -> None:
    result = run([SUN_LIKE, EARTH_LIKE], tmp_path)
    assert result.findings.height == 0


# --- errors (data integrity) -------------------------------------------------------------------
def test_missing_value(tmp_path: Path) -> None:
    rows = [SUN_LIKE, EARTH_LIKE,
            {"id": "nosize", "label": "terrestrial planet", "parent": "S", "semi_major_axis": AU},
            {"id": "noorbit", "label": "terrestrial planet", "parent": "S", "mass": M_EARTH},
            {"id": "sized", "label": "terrestrial planet", "radius": 6.4e6}]
    assert set(fired(run(rows, tmp_path), "missing-value")) == {"nosize", "noorbit"}


def test_bad_cell(tmp_path: Path) -> None:
    rows = [SUN_LIKE, {**EARTH_LIKE, "mass": None, "_bad": "mass"}, {**EARTH_LIKE, "id": "ok"}]
    assert fired(run(rows, tmp_path), "bad-cell") == {"P": "error"}


def test_non_positive(tmp_path: Path) -> None:
    rows = [SUN_LIKE, {**EARTH_LIKE, "mass": -M_EARTH}, {**EARTH_LIKE, "id": "tiny", "mass": 1.0}]
    assert fired(run(rows, tmp_path), "non-positive") == {"P": "error"}


def test_duplicate_id(tmp_path: Path) -> None:
    rows = [SUN_LIKE, EARTH_LIKE, {**EARTH_LIKE, "semi_major_axis": 2 * AU},
            {**EARTH_LIKE, "id": "Q", "semi_major_axis": 3 * AU}]
    result = run(rows, tmp_path)
    assert set(fired(result, "duplicate-id")) == {"P"}
    assert result.findings.filter(rule="duplicate-id").height == 2


def test_orphan_parent(tmp_path: Path) -> None:
    rows = [SUN_LIKE, EARTH_LIKE, {**EARTH_LIKE, "id": "lost", "parent": "nowhere"}]
    assert fired(run(rows, tmp_path), "orphan-parent") == {"lost": "error"}


def test_parent_cycle_and_self_parent(tmp_path: Path) -> None:
    rows = [SUN_LIKE, EARTH_LIKE, moon("M", 3.8e8),
            {**EARTH_LIKE, "id": "A", "parent": "B"}, {**EARTH_LIKE, "id": "B", "parent": "A"},
            {**EARTH_LIKE, "id": "C", "parent": "C"}]
    assert set(fired(run(rows, tmp_path), "parent-cycle")) == {"A", "B", "C"}


def test_unit_slip_names_the_factor(tmp_path: Path) -> None:
    # A radius in metres read as km makes density 1e9x too small; the band is Seager et al. 2007.
    rows = [SUN_LIKE, {**EARTH_LIKE, "radius": 6.371e9},
            {**EARTH_LIKE, "id": "light", "radius": 6.371e6 * 1.6}]  # 4x light: suspect, no slip
    result = run(rows, tmp_path)
    assert fired(result, "unit-slip") == {"P": "error"}
    message = result.findings.filter(rule="unit-slip")["message"][0]
    assert "radius looks 1000x too large" in message
    assert "light" in fired(result, "family-density")


def test_bad_eccentricity(tmp_path: Path) -> None:
    # Bound Keplerian orbits have 0 <= e < 1 (orbital mechanics): a negative e is broken data;
    # e >= 1 is an unbound orbit, as 1I/'Oumuamua's (e = 1.20; Meech et al. 2017, Nature 552,
    # 378) in exoplanet.eu: a note.
    rows = [SUN_LIKE, {**EARTH_LIKE, "eccentricity": 1.2},
            {**EARTH_LIKE, "id": "neg", "eccentricity": -0.1, "semi_major_axis": 9 * AU,
             "period": None},
            {**EARTH_LIKE, "id": "ok", "eccentricity": 0.99, "semi_major_axis": 40 * AU,
             "period": None}]
    assert fired(run(rows, tmp_path), "bad-eccentricity") == {"P": "note", "neg": "error"}


# --- single bodies -------------------------------------------------------------------------
def test_denser_than_iron(tmp_path: Path) -> None:
    # Seager et al. 2007: pure iron at 1 M_earth has R = 0.789 R_earth; 5% tolerance.
    rows = [SUN_LIKE, {**EARTH_LIKE, "radius": 0.70 * R_EARTH},
            {**EARTH_LIKE, "id": "ironish", "radius": 0.80 * R_EARTH, "semi_major_axis": 2 * AU,
             "period": None}]
    result = run(rows, tmp_path)
    assert fired(result, "denser-than-iron") == {"P": "impossible"}
    assert "ironish" not in fired(result, "family-density")


def _radius_at(mass: float, density: float) -> float:
    """The radius that gives this mass that density."""
    return (mass / (density * bodies.sphere_volume(1.0))) ** (1 / 3)


def test_family_density(tmp_path: Path) -> None:
    # Rock band: 0.6 x Seager MgSiO3 density up to the Seager iron density at the same mass.
    low = 0.6 * bodies.composition_density(M_EARTH, "rock")
    rows = [SUN_LIKE, {**EARTH_LIKE, "radius": _radius_at(M_EARTH, 0.8 * low)},
            {**EARTH_LIKE, "id": "edge", "radius": _radius_at(M_EARTH, 1.02 * low),
             "semi_major_axis": 2 * AU, "period": None}]
    assert fired(run(rows, tmp_path), "family-density") == {"P": "suspect"}


def test_oversized_cold_body(tmp_path: Path) -> None:
    # Cold H/He bodies stay near 1 R_jup (Burrows & Liebert 1993); inflated ones reach ~2 R_jup.
    giant = {**EARTH_LIKE, "label": "gas giant", "family": "gas_giant", "mass": M_JUPITER,
             "semi_major_axis": 5.2 * AU, "period": None, "eccentricity": 0.0}
    rows = [SUN_LIKE, {**giant, "id": "big", "radius": 2.5 * R_JUPITER},
            {**giant, "id": "hot", "radius": 1.9 * R_JUPITER, "semi_major_axis": 15 * AU}]
    assert fired(run(rows, tmp_path), "oversized-cold-body") == {"big": "suspect"}


def _remnant(body_id: str, family: str, mass: float, radius: float) -> dict:
    return {"id": body_id, "label": family.replace("_", " "), "family": family, "mass": mass,
            "radius": radius}


def test_over_chandrasekhar(tmp_path: Path) -> None:
    # Chandrasekhar 1935: 1.44 M_sun for mu_e = 2.
    rows = [_remnant("heavy", "white_dwarf", 1.50 * M_SUN, 3e6),
            _remnant("edge", "white_dwarf", 1.43 * M_SUN, 3e6)]
    assert fired(run(rows, tmp_path), "over-chandrasekhar") == {"heavy": "impossible"}


def test_over_neutron_star_max(tmp_path: Path) -> None:
    # Heaviest measured 2.35 M_sun (Romani et al. 2022); causal bound ~3 M_sun (memory).
    rows = [_remnant(i, "neutron_star", m * M_SUN, 12e3)
            for i, m in (("over3", 3.2), ("over23", 2.5), ("ok", 2.2))]
    result = run(rows, tmp_path)
    assert fired(result, "over-neutron-star-max") == {"over3": "impossible", "over23": "suspect"}
    # each finding quotes, and measures its margin from, the limit of its own severity
    found = {r["body"]: r for r in result.findings.filter(
        pl.col("rule") == "over-neutron-star-max").to_dicts()}
    assert found["over3"]["limit"] == pytest.approx(3.0) and found["over23"]["limit"] == \
        pytest.approx(2.3)
    assert found["over3"]["margin"] == pytest.approx((3.2 - 3.0) / 3.0)
    assert found["over3"]["message"] == "mass 3.2 M_sun is above the limit 3 M_sun"
    assert found["over23"]["message"] == "mass 2.5 M_sun is above the limit 2.3 M_sun"
    rule = next(r for r in all_rules() if r.id == "over-neutron-star-max")
    assert rule.severities == ("impossible", "suspect")
    assert "memory" not in rule.source  # a citation only; provenance stays in the code


def test_every_rule_names_each_severity_it_can_give(tmp_path: Path) -> None:
    """A rule with a severity expression declares its other severities, so coverage and the
    rule list show each; a finding never has a severity its rule does not declare."""
    rows = [_remnant(i, "neutron_star", m * M_SUN, 12e3) for i, m in (("a", 3.2), ("b", 2.5))]
    result = run(rows, tmp_path)
    declared = {r.id: set(r.severities) for r in all_rules()}
    for rule_id, severity in result.findings.select("rule", "severity").iter_rows():
        assert severity in declared[rule_id], (rule_id, severity)
    for rule in all_rules():
        assert (rule.severity_expr is not None) == (len(rule.severities) > 1), rule.id
        assert "from memory" not in rule.source and "memory)" not in rule.source, rule.id


def test_under_hydrogen_burning(tmp_path: Path) -> None:
    # Hydrogen-burning limit ~0.075-0.08 M_sun (Burrows & Liebert 1993). Below it a "star" of a
    # brown dwarf's size is a brown dwarf labelled as a star (suspect); one denser than any brown
    # dwarf (3x the cold H/He sphere, Zapolsky & Salpeter 1969) is impossible.
    rows = [{**SUN_LIKE, "id": "faint", "mass": 0.070 * M_SUN, "radius": 0.1 * R_SUN},
            {**SUN_LIKE, "id": "tiny", "mass": 0.070 * M_SUN, "radius": 0.03 * R_SUN},
            {**SUN_LIKE, "id": "dim", "mass": 0.076 * M_SUN, "radius": 0.1 * R_SUN}]
    result = run(rows, tmp_path)
    assert fired(result, "under-hydrogen-burning") == {"faint": "suspect", "tiny": "impossible"}
    messages = dict(result.findings.filter(pl.col("rule") == "under-hydrogen-burning")
                    .select("body", "message").iter_rows())
    assert messages["faint"].endswith(": a brown dwarf?")
    assert messages["tiny"].endswith("too dense for a brown dwarf")


# Stars beyond the main sequence, as real catalogues of planet hosts hold them.
STARS_OFF_THE_MAIN_SEQUENCE = [
    # a K giant host: 1.1 M_sun, 45 R_sun (the issue's example; giants of 1-2 M_sun reach
    # tens of R_sun on the red-giant branch)
    ("k_giant", 1.1, 45.0),
    # Betelgeuse: ~18 M_sun, ~760 R_sun (Joyce et al. 2020, ApJ 902, 63)
    ("supergiant", 18.0, 760.0),
    # a hot subdwarf (sdB): 0.47 M_sun at log g 6.0 -> ~0.11 R_sun (Heber 2009, ARA&A 47, 211)
    ("subdwarf", 0.47, 0.11),
    # a T Tauri star: 0.8 M_sun at ~2 R_sun, twice its main-sequence radius (pre-main sequence)
    ("t_tauri", 0.8, 2.0),
]


def test_stars_beyond_the_main_sequence_are_in_the_star_band(tmp_path: Path) -> None:
    rows = [{**SUN_LIKE, "id": name, "mass": m * M_SUN, "radius": r * R_SUN}
            for name, m, r in STARS_OFF_THE_MAIN_SEQUENCE]
    rows.append({**SUN_LIKE, "id": "too_small", "mass": 1.0 * M_SUN, "radius": 0.05 * R_SUN})
    result = run(rows, tmp_path)
    assert set(result.findings["body"]) == {"too_small"}  # 8000x the Sun's density


def test_a_white_dwarf_labelled_star_is_a_degenerate_star_not_a_unit_slip(tmp_path: Path) -> None:
    # Sirius B: 1.018 M_sun, 0.0081 R_sun (Bond et al. 2017, ApJ 840, 70); the Sun as control
    rows = [{**SUN_LIKE, "id": "sirius_b", "mass": 1.018 * M_SUN, "radius": 0.0081 * R_SUN},
            SUN_LIKE]
    result = run(rows, tmp_path)
    assert fired(result, "degenerate-star") == {"sirius_b": "note"}
    assert set(result.findings["rule"]) == {"degenerate-star"}


def test_brown_dwarf_range(tmp_path: Path) -> None:
    # Deuterium burning ~13 M_jup (Spiegel, Burrows & Milsom 2011) up to ~0.075 M_sun.
    rows = [_remnant(i, "brown_dwarf", m * M_JUPITER, 0.9 * R_JUPITER)
            for i, m in (("light", 10.0), ("heavy", 85.0), ("ok", 14.0), ("ok2", 75.0))]
    assert set(fired(run(rows, tmp_path), "brown-dwarf-range")) == {"light", "heavy"}


# --- orbits ------------------------------------------------------------------------------------
def test_periapsis_inside_parent(tmp_path: Path) -> None:
    rows = [SUN_LIKE, EARTH_LIKE, moon("through", 6.0e6), moon("grazing", 1.05 * (6.371e6 + 2e5))]
    assert fired(run(rows, tmp_path), "periapsis-inside-parent") == {"through": "impossible"}


def test_inside_rigid_roche_depends_on_size(tmp_path: Path) -> None:
    # Rigid Roche limit R_M (2 rho_M / rho_m)^(1/3) (Shu 1982); gravity-bound above ~200 km.
    density = bodies.bulk_density(1e20, 2e5)
    rigid = orbits.roche_rigid(6.371e6, bodies.bulk_density(M_EARTH, 6.371e6), density)
    small_mass = density * bodies.sphere_volume(1e4)
    rows = [SUN_LIKE, EARTH_LIKE, moon("big", 0.9 * rigid),
            moon("pebble", 0.9 * rigid, mass=small_mass, radius=1e4), moon("out", 1.05 * rigid)]
    assert fired(run(rows, tmp_path), "inside-rigid-roche") == {
        "big": "impossible", "pebble": "unstable"}


def test_inside_fluid_roche(tmp_path: Path) -> None:
    # Fluid Roche limit 2.44 R_M (rho_M / rho_m)^(1/3) (Roche 1849): a note for solid bodies.
    density = bodies.bulk_density(1e20, 2e5)
    fluid = orbits.roche_fluid(6.371e6, bodies.bulk_density(M_EARTH, 6.371e6), density)
    rows = [SUN_LIKE, EARTH_LIKE, moon("inside", 0.9 * fluid), moon("outside", 1.05 * fluid)]
    assert fired(run(rows, tmp_path), "inside-fluid-roche") == {"inside": "note"}


def test_roche_lobe_overflow(tmp_path: Path) -> None:
    # Eggleton 1983: at q = 1 the lobe is 0.379 of the separation. Real mass-transferring pairs
    # fill 1.04-1.08 (issue 12): 1.055 at 2.5 R_sun is left alone, 1.2 at 2.2 R_sun is not.
    twin = {**SUN_LIKE, "parent": "S", "eccentricity": 0.0}
    rows = [SUN_LIKE, {**twin, "id": "close", "semi_major_axis": 2.2 * R_SUN},
            {**SUN_LIKE, "id": "S2"}, {**twin, "id": "wide", "parent": "S2",
                                       "semi_major_axis": 3.0 * R_SUN},
            {**SUN_LIKE, "id": "S3"}, {**twin, "id": "contact", "parent": "S3",
                                       "semi_major_axis": 2.5 * R_SUN}]
    assert fired(run(rows, tmp_path), "roche-lobe-overflow") == {"close": "unstable"}


def _planet_hill() -> float:
    return orbits.hill_radius(AU, 0.0167, M_EARTH, M_SUN)


def test_duplicate_orbit(tmp_path: Path) -> None:
    # One planet listed twice, as published catalogues do: the second period 0.3 % longer and
    # its mass 10 % larger (two papers' values). Janus and Epimetheus (JPL SSD: a = 151,460 and
    # 151,410 km; masses 1.9e18 and 5.3e17 kg) share an orbit but differ 3.6x in mass: no
    # finding. Kepler's third law gives each period from its axis.
    copy = {**EARTH_LIKE, "id": "P2", "semi_major_axis": 1.002 * AU,
            "mass": 1.1 * M_EARTH, "period": 1.003 * EARTH_LIKE["period"]}
    saturn = {"id": "Sat", "label": "gas giant", "family": "gas_giant", "parent": "S",
              "mass": 5.683e26, "radius": 5.8232e7, "semi_major_axis": 9.54 * AU}
    janus = {"id": "Janus", "label": "icy moon", "family": "ice", "parent": "Sat",
             "mass": 1.9e18, "radius": 8.9e4, "semi_major_axis": 1.5146e8}
    epimetheus = {**janus, "id": "Epimetheus", "mass": 5.3e17, "radius": 5.8e4,
                  "semi_major_axis": 1.5141e8}
    rows = [SUN_LIKE, EARTH_LIKE, copy, saturn, janus, epimetheus]
    assert fired(run(rows, tmp_path), "duplicate-orbit") == {"P2": "suspect"}


def test_outside_hill_sphere(tmp_path: Path) -> None:
    # Hill radius a(1-e)(m/3M)^(1/3): Earth ~1.5e6 km.
    rows = [SUN_LIKE, EARTH_LIKE, moon("gone", 1.2 * _planet_hill()),
            moon("held", 0.95 * _planet_hill())]
    result = run(rows, tmp_path)
    assert fired(result, "outside-hill-sphere") == {"gone": "impossible"}
    assert fired(result, "beyond-stable-hill") == {"held": "unstable"}


def test_beyond_stable_hill(tmp_path: Path) -> None:
    # Domingos, Winter & Yokoyama 2006: prograde a_crit = 0.4895 (1 - 1.0305 e_p - 0.2738 e_s).
    rows = [SUN_LIKE, EARTH_LIKE, moon("wide", 0.60 * _planet_hill()),
            moon("ok", 0.45 * _planet_hill())]
    assert fired(run(rows, tmp_path), "beyond-stable-hill") == {"wide": "unstable"}


def test_beyond_stable_hill_uses_the_retrograde_limit_for_retrograde_moons(tmp_path: Path) -> None:
    # Domingos, Winter & Yokoyama 2006: retrograde satellites are stable to ~0.93 r_H, prograde to
    # ~0.49 r_H. The sense comes from `retrograde` or an inclination beyond 90 deg (in radians).
    hill = _planet_hill()
    rows = [SUN_LIKE, EARTH_LIKE, moon("pro", 0.70 * hill),
            moon("retro", 0.70 * hill, retrograde=True),
            moon("tilted", 0.70 * hill, inclination=math.radians(150.0)),
            moon("far", 0.97 * hill, retrograde=True)]
    result = run(rows, tmp_path)
    assert fired(result, "beyond-stable-hill") == {"pro": "unstable", "far": "unstable"}
    assert "retrograde orbits are stable to" in result.findings.filter(
        pl.col("body") == "far")["message"][0]


def test_kepler_mismatch(tmp_path: Path) -> None:
    # Kepler's third law: P = 2 pi sqrt(a^3 / G(M+m)). The tolerance is 3 sigma of period /
    # Kepler period, sigma^2 = (1.5 da/a)^2 + (0.5 dM/M)^2 + (dP/P)^2 (first-order propagation),
    # within 5 % and 20 % (common practice; issue 12: every mismatch over 20 % was real).
    period = EARTH_LIKE["period"]

    def found(host_error: float | None, *ratios: float) -> dict[str, str]:
        host = {**SUN_LIKE, "mass_error": None if host_error is None else host_error * M_SUN}
        rows = [host] + [{**EARTH_LIKE, "id": f"x{r}", "period": r * period,
                          "semi_major_axis_error": 0.001 * AU} for r in ratios]
        return fired(run(rows, tmp_path / f"run{host_error}"), "kepler-mismatch")

    # well measured (host mass to 1 %): the 5 % floor
    assert found(0.01, 1.10, 1.04) == {"x1.1": "suspect"}
    # no host-mass uncertainty: taken as 10 %, so 3 sigma = 15 %
    assert found(None, 1.10, 1.25) == {"x1.25": "suspect"}
    # a poorly known host (50 %): the ceiling of 20 % still finds a 21 % mismatch
    assert found(0.5, 1.19, 1.21) == {"x1.21": "suspect"}


def test_denser_than_iron_is_judged_in_sigma(tmp_path: Path) -> None:
    # The issue's example: 1.05x the iron curve (Seager et al. 2007) on a mass of 7.3 +- 3.2
    # Earth masses is 0.14 sigma over: no finding; 1.05x with a 2 % error is 2.5 sigma over (no
    # finding: impossible only past 3 sigma), 1.20x with 2 % is 10 sigma over (impossible); without
    # an uncertainty the curve's 5 % tolerance stays.
    mass = 7.3 * M_EARTH
    iron = bodies.composition_density(mass, "iron")

    def planet(body_id: str, factor: float, error: float | None) -> dict:
        radius = (3 * mass / (4 * np.pi * factor * iron)) ** (1 / 3)
        return {**EARTH_LIKE, "id": body_id, "mass": mass, "radius": radius,
                "mass_error": None if error is None else error * mass}

    rows = [SUN_LIKE, planet("loose", 1.05 * 1.001, 3.2 / 7.3), planet("tight", 1.20, 0.02),
            planet("close", 1.05, 0.02), planet("bare", 1.06, None)]
    result = run(rows, tmp_path)
    assert fired(result, "denser-than-iron") == {"tight": "impossible", "bare": "impossible"}
    messages = dict(result.findings.filter(pl.col("rule") == "denser-than-iron")
                    .select("body", "message").iter_rows())
    assert "sigma above" in messages["tight"] and "no uncertainty given" in messages["bare"]


def test_a_mass_as_uncertain_as_itself_is_an_upper_limit(tmp_path: Path) -> None:
    # 0.01 +- 0.01 M_jup (exoplanet.eu's Kepler-37 b) and TEPCat's 0 +0.15 (no mass measured,
    # an upper limit): a note, never a density finding or a non-positive mass.
    rows = [SUN_LIKE,
            {**EARTH_LIKE, "id": "limit", "mass": 0.01 * M_JUPITER, "radius": 0.026 * R_JUPITER,
             "mass_error": 0.01 * M_JUPITER},
            {**EARTH_LIKE, "id": "zero", "mass": 0.0, "mass_error": 0.15 * M_JUPITER,
             "semi_major_axis": 5 * AU, "period": None}]
    result = run(rows, tmp_path)
    assert fired(result, "mass-upper-limit") == {"limit": "note", "zero": "note"}
    assert set(result.findings["rule"]) == {"mass-upper-limit"}


def _planet(body_id: str, a_au: float, e: float, mass: float = M_EARTH) -> dict:
    return {**EARTH_LIKE, "id": body_id, "semi_major_axis": a_au * AU, "eccentricity": e,
            "mass": mass, "period": None, "radius": 6.371e6 * (mass / M_EARTH) ** 0.27}


def test_crossing_orbits(tmp_path: Path) -> None:
    rows = [SUN_LIKE, _planet("in", 1.0, 0.3), _planet("out", 1.5, 0.2),
            _planet("far", 2.3, 0.05)]
    assert fired(run(rows, tmp_path), "crossing-orbits") == {"out": "unstable"}


def test_hill_spacing(tmp_path: Path) -> None:
    # Gladman 1993: two planets are Hill-stable beyond 2 sqrt(3) mutual Hill radii.
    rows = [SUN_LIKE, {**SUN_LIKE, "id": "S2"},
            _planet("g1", 5.0, 0.0, M_JUPITER), _planet("g2", 5.5, 0.0, M_JUPITER),
            {**_planet("h1", 5.0, 0.0, M_JUPITER), "parent": "S2"},
            {**_planet("h2", 6.6, 0.0, M_JUPITER), "parent": "S2"}]
    assert fired(run(rows, tmp_path), "hill-spacing") == {"g2": "unstable"}


def test_heavier_than_parent(tmp_path: Path) -> None:
    far = 0.3 * _planet_hill()
    rows = [SUN_LIKE, EARTH_LIKE, moon("heavy", far, mass=2 * M_EARTH, radius=8e6),
            moon("light", 0.25 * _planet_hill(), mass=0.5 * M_EARTH, radius=5e6)]
    assert fired(run(rows, tmp_path), "heavier-than-parent") == {"heavy": "suspect"}


def test_binary_barycentre(tmp_path: Path) -> None:
    # Pluto-Charon: barycentre ~2,000 km from Pluto's centre, outside Pluto (REFERENCES.md; Charon
    # 1.586e21 kg at 19,591 km from memory). Sun-Jupiter's (~742,000 km) is outside the Sun too,
    # but q = 0.001 is a planet and host, below the binary mass ratio 0.01 (common practice).
    pluto = {"id": "pluto", "label": "dwarf planet", "family": "rock_ice", "parent": "S",
             "mass": 1.303e22, "radius": 1.1883e6, "semi_major_axis": 39.48 * AU,
             "eccentricity": 0.2488}
    charon = {"id": "charon", "label": "icy moon", "family": "rock_ice", "parent": "pluto",
              "mass": 1.586e21, "radius": 6.06e5, "semi_major_axis": 1.9591e7, "eccentricity": 0.0}
    jupiter = {**_planet("J", 5.2, 0.0, 1.89819e27), "radius": 6.9911e7, "label": "gas giant",
               "family": "gas_giant"}
    result = run([SUN_LIKE, EARTH_LIKE, jupiter, pluto, charon], tmp_path)
    assert fired(result, "binary-barycentre") == {"charon": "note"}
    offset = result.findings.filter(rule="binary-barycentre")["value"][0]
    assert offset == pytest.approx(2_000e3, rel=0.1)


def test_tidal_lock_age(tmp_path: Path) -> None:
    # Gladman et al. 1996 despinning time: the Moon locks in ~2.4e7 yr, far less than its age.
    lunar = moon("luna", 3.844e8, mass=7.3458e22, radius=1.7374e6, tidally_locked=True,
                 age=4.5e9)
    distant = moon("far", 0.3 * _planet_hill(), mass=1e19, radius=1.5e5,
                   tidally_locked=True, age=1e8)
    assert fired(run([SUN_LIKE, EARTH_LIKE, lunar, distant], tmp_path), "tidal-lock-age") == {
        "far": "suspect"}


def test_label_outlier(tmp_path: Path) -> None:
    # Modified z-score with the MAD (Iglewicz & Hoaglin 1993); threshold 6 (common practice).
    rows = [SUN_LIKE]
    for i in range(60):
        scale = 1.0 + 0.002 * (i - 30)
        rows.append(_planet(f"p{i}", 1.0 + 0.8 * i, 0.0, M_EARTH * scale))
    rows[-1] = {**rows[-1], "radius": rows[-1]["radius"] * 1.15}
    result = run(rows, tmp_path)
    assert set(fired(result, "label-outlier")) == {"p59"}


def test_every_fired_finding_is_past_its_limit(tmp_path: Path) -> None:
    # Invariant over the bundled demo catalogue: a rule that fires "above" reports a value above
    # its limit (and "below" below). It once failed when a window statistic was recomputed over
    # the flagged rows only.
    sample = next(p for p in Path(__file__).parents[1].joinpath("sample_data").glob("*.csv")
                  if ".truth." not in p.name)
    findings = check_file(sample, tmp_path, CheckOptions(artefacts=False)).findings
    directions = {rule.id: rule.direction for rule in all_rules()}
    for row in findings.iter_rows(named=True):
        direction = directions[row["rule"]]
        if direction == "above" and row["limit"] is not None:
            assert row["value"] > row["limit"], row
        if direction == "below" and row["limit"] is not None:
            assert row["value"] < row["limit"], row


def test_unit_slip_does_not_cascade_into_roche_rules(tmp_path: Path) -> None:
    # A radius 1000x too large makes density 1e9x too small; Roche limits built on it are noise.
    rows = [SUN_LIKE, {**EARTH_LIKE, "radius": 6.371e9, "semi_major_axis": 0.5 * AU,
                       "period": kepler_period(0.5 * AU, M_SUN, M_EARTH)}]
    result = run(rows, tmp_path)
    assert set(result.findings["rule"]) == {"unit-slip"}


def test_bodies_in_a_parent_loop_get_no_orbit_findings(tmp_path: Path) -> None:
    rows = [{**EARTH_LIKE, "id": "A", "parent": "B", "mass": 2 * M_EARTH, "period": 1.0},
            {**EARTH_LIKE, "id": "B", "parent": "A", "period": 1.0}]
    assert set(run(rows, tmp_path).findings["rule"]) == {"parent-cycle"}


def test_white_dwarf_beyond_the_curve_is_over_chandrasekhar_only(tmp_path: Path) -> None:
    # Nauenberg 1972's radius vanishes at 1.454 M_sun, so no density band exists beyond it.
    rows = [_remnant("heavy", "white_dwarf", 1.6 * M_SUN, 3e6)]
    assert set(run(rows, tmp_path).findings["rule"]) == {"over-chandrasekhar"}


def test_a_parent_with_a_broken_eccentricity_gives_its_moons_no_hill_verdict(
        tmp_path: Path) -> None:
    # e >= 1 is reported once (bad-eccentricity); a Hill radius built on it would be negative.
    rows = [SUN_LIKE, {**EARTH_LIKE, "eccentricity": 1.5}, moon("m", 3.8e8)]
    result = run(rows, tmp_path)
    assert fired(result, "bad-eccentricity") == {"P": "note"}
    assert not result.findings.filter(pl.col("body") == "m").height
    hill = pl.read_parquet(result.bodies).filter(pl.col("id") == "m")["parent_hill_radius"]
    assert hill.to_list() == [None]  # not a negative radius


def test_a_semi_major_axis_follows_from_the_period_and_the_parent_mass(tmp_path: Path) -> None:
    # Earth: P = 365.256 d around 1 M_sun gives a = 1.000 au (Kepler's third law; NSSDCA Earth
    # fact sheet: 149.598e6 km, sidereal period 365.256 d). No missing-value finding; the orbit
    # rules judge the derived axis; kepler-mismatch cannot (it would agree by construction).
    rows = [SUN_LIKE, {**EARTH_LIKE, "semi_major_axis": None, "period": 365.256 * 86400.0},
            {**EARTH_LIKE, "id": "lost", "semi_major_axis": None, "period": None}]
    result = run(rows, tmp_path)
    bodies = pl.read_parquet(result.bodies).filter(pl.col("family") == "rock").sort("id")
    assert bodies["id"].to_list() == ["P", "lost"]
    assert bodies["orbit_derived"].to_list() == ["semi_major_axis", None]
    a = (bodies["periapsis"][0] + bodies["apoapsis"][0]) / 2.0  # a = (q + Q) / 2
    assert a == pytest.approx(AU, rel=1e-3)
    assert bodies["period_ratio"].to_list() == [None, None]
    assert fired(result, "missing-value") == {"lost": "error"}


def test_coverage_says_why_in_the_catalogues_terms(tmp_path: Path) -> None:
    """Why-skipped names what a body lacks as the catalogue would say it, with how many; a
    data-integrity check judges every row (a row without a bad cell or a parent passes)."""
    rows = [SUN_LIKE, EARTH_LIKE, {**EARTH_LIKE, "id": "Q", "semi_major_axis": None,
                                   "period": None},
            {**EARTH_LIKE, "id": "R", "period": None, "_bad": "temperature"}]
    coverage = {r["rule"]: r for r in run(rows, tmp_path).coverage.to_dicts()}
    for rule in ("bad-cell", "orphan-parent", "parent-cycle"):
        assert (coverage[rule]["evaluated"], coverage[rule]["skipped"]) == (4, 0), rule
    assert coverage["kepler-mismatch"]["why"] == ("2 without an orbital period, a semi-major axis "
                                                  "given (not derived from the period) and the "
                                                  "parent's mass")
    assert "1 without an orbit (semi-major axis)" in coverage["periapsis-inside-parent"]["why"]
    assert not any("_" in (r["why"] or "").replace("black_hole", "")
                   for r in coverage.values())  # no working column's name
