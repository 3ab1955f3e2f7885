"""The demo catalogue: deterministic, exact ground truth, clean bodies physically sound.

Physics is checked with physics/ directly (not through the rules engine), each check naming its
published source (../shared/REFERENCES.md).
"""

from __future__ import annotations

import gzip
from pathlib import Path

import numpy as np
import polars as pl
import pytest
from demo_support import RULES, Demo, N, demo, family_band, orbiting

from bodycensus.demo import COLUMNS, TRUTH_COLUMNS, generate_demo, truth_path, write_demo
from bodycensus.science.families import FAMILY_PARAMETERS
from bodycensus.science.physics import bodies, orbits, tides
from bodycensus.science.units import M_JUPITER, M_SUN

__all__ = ["demo"]  # the session fixture


# --- shape, size, determinism -----------------------------------------------------------------
def test_header_names_and_size(demo: Demo) -> None:
    assert demo.catalogue.columns == list(COLUMNS)
    assert demo.catalogue.height == N
    assert demo.truth.columns == list(TRUTH_COLUMNS)


@pytest.mark.parametrize("n", [1, 137, 5_000])
def test_exact_size_and_parents_exist(n: int) -> None:
    catalogue, _ = generate_demo(n, seed=3)
    assert catalogue.height == n
    parents = set(catalogue["orbits"].drop_nulls()) - set(catalogue["id"])
    assert all(p.startswith("Z") for p in parents)  # only the planted orphans dangle


def test_same_seed_same_bytes_other_seed_differs(tmp_path: Path) -> None:
    a, b, c = (write_demo(tmp_path / f"{k}.csv.gz", 3_000, seed)[0]
               for k, seed in (("a", 11), ("b", 11), ("c", 12)))
    assert a.read_bytes() == b.read_bytes()
    assert a.read_bytes() != c.read_bytes()
    assert (tmp_path / "a.truth.csv").read_bytes() == (tmp_path / "b.truth.csv").read_bytes()


@pytest.mark.parametrize("suffix", [".csv", ".csv.gz", ".parquet", ".ndjson"])
def test_every_format_round_trips(tmp_path: Path, suffix: str) -> None:
    out, truth = write_demo(tmp_path / f"demo{suffix}", 2_000, 5)
    catalogue, _ = generate_demo(2_000, 5)
    if suffix == ".parquet":
        back = pl.read_parquet(out)
    elif suffix == ".ndjson":
        back = pl.read_ndjson(out, schema=catalogue.schema)
    else:
        text = gzip.decompress(out.read_bytes()) if suffix == ".csv.gz" else out.read_bytes()
        back = pl.read_csv(text, schema=catalogue.schema)
    assert back.equals(catalogue)
    assert truth == tmp_path / "demo.truth.csv"
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([out.name, truth.name])


def test_unknown_suffix_is_a_clear_error(tmp_path: Path) -> None:
    with pytest.raises(ValueError, match=r"\*\.csv, \*\.csv\.gz, \*\.parquet or \*\.ndjson"):
        write_demo(tmp_path / "demo.xlsx", 10)
    assert truth_path(Path("x/cat.csv.gz")) == Path("x/cat.truth.csv")


# --- the truth ---------------------------------------------------------------------------------
def test_truth_plants_every_rule_and_three_artefacts(demo: Demo) -> None:
    rules = demo.truth.filter(pl.col("kind") == "rule")
    counts = dict(rules.group_by("rule").len().iter_rows())
    assert set(counts) == set(RULES)
    assert min(counts.values()) >= 3
    artefacts = demo.truth.filter(pl.col("kind") == "artefact")
    assert sorted(artefacts["rule"]) == ["cutoff", "gap", "spike"]
    assert rules["body"].null_count() == 0 and artefacts["body"].null_count() == 3
    planted = rules.filter(pl.col("rule") != "parent-cycle")
    assert planted["body"].n_unique() == planted.height  # one rule per planted body


def test_truth_covers_the_rule_registry(demo: Demo) -> None:
    registry = pytest.importorskip("bodycensus.science.rules")
    assert set(registry.RULE_IDS) <= set(demo.truth["rule"])


def test_defects_scale_with_size() -> None:
    _, truth = generate_demo(80_000, seed=1)
    assert truth.filter(pl.col("rule") == "kepler-mismatch").height == 4  # max(3, N / 20,000)


def test_bad_cells_are_exactly_the_planted_ones(demo: Demo) -> None:
    temps = demo.catalogue["temp_k"]
    unreadable = demo.catalogue.filter(temps.is_not_null()
                                       & temps.cast(pl.Float64, strict=False).is_null())
    assert sorted(unreadable["id"]) == sorted(demo.planted_ids("bad-cell"))


# --- clean bodies are physically sound ---------------------------------------------------------
def test_clean_orbits_clear_parent_and_fluid_roche_limit(demo: Demo) -> None:
    s, rows = demo.si, np.flatnonzero(orbiting(demo))
    par = demo.parent[rows]
    peri = orbits.periapsis(s["a"][rows], s["e"][rows])
    # Fluid Roche limit 2.44 R_M (rho_M / rho_m)^(1/3) (Roche 1849): no clean body inside it.
    fluid = orbits.roche_fluid(s["radius"][par], s["density"][par], s["density"][rows])
    assert np.all(peri > 1.1 * fluid)
    assert np.all(peri > 1.5 * s["radius"][par])
    assert np.all((s["e"][rows] >= 0) & (s["e"][rows] < 0.8))


def test_clean_moons_sit_well_inside_the_stable_hill_region(demo: Demo) -> None:
    s, par = demo.si, np.maximum(demo.parent, 0)
    moons = np.flatnonzero(orbiting(demo) & (demo.parent[par] >= 0))
    assert len(moons) > 1000
    planet, star = demo.parent[moons], demo.parent[demo.parent[moons]]
    hill = orbits.hill_radius(s["a"][planet], s["e"][planet], s["mass"][planet], s["mass"][star])
    # Prograde stability limit 0.4895 (1 - 1.0305 e_p - 0.2738 e_s) r_H (Domingos et al. 2006).
    limit = orbits.stable_hill_fraction(s["e"][planet], s["e"][moons]) * hill
    assert np.all(orbits.apoapsis(s["a"][moons], s["e"][moons]) < 0.7 * limit)


def test_clean_periods_follow_kepler_within_half_a_percent(demo: Demo) -> None:
    s, rows = demo.si, np.flatnonzero(orbiting(demo))
    # P = 2 pi sqrt(a^3 / G(M+m)) (Kepler's third law, Newton's form; REFERENCES.md).
    kepler = orbits.kepler_period(s["a"][rows], s["mass"][demo.parent[rows]], s["mass"][rows])
    assert np.max(np.abs(s["period"][rows] / kepler - 1.0)) < 0.005
    assert np.all(s["mass"][rows] < s["mass"][demo.parent[rows]])  # lighter than the parent


def test_clean_siblings_neither_cross_nor_crowd(demo: Demo) -> None:
    s, rows = demo.si, np.flatnonzero(orbiting(demo))
    order = rows[np.lexsort((s["a"][rows], demo.parent[rows]))]
    inner, outer = order[:-1], order[1:]
    pair = demo.parent[inner] == demo.parent[outer]
    inner, outer = inner[pair], outer[pair]
    assert np.all(orbits.apoapsis(s["a"][inner], s["e"][inner])
                  < orbits.periapsis(s["a"][outer], s["e"][outer]))
    mutual = orbits.mutual_hill_radius(s["a"][inner], s["mass"][inner], s["mass"][outer],
                                       s["mass"][demo.parent[inner]])
    # Two planets are Hill-stable beyond 2 sqrt(3) mutual Hill radii (Gladman 1993); the demo
    # keeps > ~10, the multi-planet rule of thumb (Chambers et al. 1996; "10" from memory).
    assert np.min((s["a"][outer] - s["a"][inner]) / mutual) > 10.0


def test_clean_densities_inside_family_bands(demo: Demo) -> None:
    s = demo.si
    for family in set(s["family"]) - {"black_hole", "ring"}:
        rows = demo.clean & (s["family"] == family)
        low, high = family_band(family, s["mass"][rows])
        assert np.all((s["density"][rows] > low) & (s["density"][rows] < high)), family
        if family in ("iron", "rock", "rock_ice", "ice", "ocean", "minor"):
            # Seager et al. 2007 pure-iron curve: nothing solid is denser than iron at its mass.
            iron = bodies.composition_density(s["mass"][rows], "iron")
            assert np.all(s["density"][rows] < 1.05 * iron), family


def test_clean_stars_and_remnants_respect_mass_limits(demo: Demo) -> None:
    s, c = demo.si, demo.clean
    mass = {f: s["mass"][c & (s["family"] == f)] for f in ("star", "brown_dwarf", "white_dwarf",
                                                           "neutron_star")}
    # hydrogen burning ~0.075 M_sun (Burrows & Liebert 1993)
    assert mass["star"].min() > 0.09 * M_SUN
    assert mass["brown_dwarf"].min() > 13 * M_JUPITER  # deuterium burning (Spiegel et al. 2011)
    assert mass["brown_dwarf"].max() < 0.075 * M_SUN
    assert mass["white_dwarf"].max() < 1.44 * M_SUN  # Chandrasekhar 1935
    assert mass["neutron_star"].max() < 2.3 * M_SUN  # heaviest measured ~2.35 (Romani et al. 2022)
    cold = c & np.isin(s["family"], ["gas_giant", "brown_dwarf"])
    # Cold H/He bodies are ~1 R_jup (Burrows & Liebert 1993); hot ones inflate to ~2 R_jup.
    assert np.all(s["radius"][cold] < 2.0 * bodies.cold_hhe_radius(s["mass"][cold]))


def test_clean_lock_flags_match_the_despin_time(demo: Demo) -> None:
    s, rows = demo.si, np.flatnonzero(orbiting(demo) & demo.si["locked"])
    assert len(rows) > 1000
    rigidity = np.array([FAMILY_PARAMETERS[f].rigidity for f in s["family"][rows]])
    q = np.array([FAMILY_PARAMETERS[f].quality_factor for f in s["family"][rows]])
    # Despin time w a^6 I Q / (3 G m_p^2 k2 R^5) (Gladman et al. 1996): locked only if < age.
    t_lock = orbits.tidal_lock_time(s["a"][rows], s["mass"][rows], s["radius"][rows],
                                    s["mass"][demo.parent[rows]], rigidity, q)
    assert np.all(t_lock < s["age"][rows] * 1.01)
    assert np.allclose(s["rotation"][rows], s["period"][rows], rtol=1e-4)


def test_clean_companion_stars_fit_their_roche_lobes(demo: Demo) -> None:
    s, star = demo.si, np.isin(demo.si["family"], ["star", "brown_dwarf", "white_dwarf"])
    rows = np.flatnonzero(orbiting(demo) & star)
    assert len(rows) > 100
    # Eggleton 1983: r_L / a = 0.49 q^(2/3) / (0.6 q^(2/3) + ln(1 + q^(1/3))), at periapsis.
    lobe = orbits.roche_lobe_radius(orbits.periapsis(s["a"][rows], s["e"][rows]),
                                    s["mass"][rows] / s["mass"][demo.parent[rows]])
    assert np.all(s["radius"][rows] < 0.5 * lobe)


def _robust_z(demo: Demo, field: str) -> np.ndarray:
    """Modified z-score 0.6745 (x - median) / MAD of log10 ``field`` within each label
    (Iglewicz & Hoaglin 1993)."""
    z = np.zeros(N)
    labels = demo.catalogue["type"].to_numpy()
    for label in set(labels) - {"planetary ring"}:  # a ring has no mass or radius
        w = labels == label
        x = np.log10(np.abs(demo.si[field][w]))
        mad = np.median(np.abs(x - np.median(x)))
        z[w] = 0.6745 * np.abs(x - np.median(x)) / mad
    return z


def test_clean_bodies_are_not_label_outliers(demo: Demo) -> None:
    for field in ("density", "mass", "radius"):
        z = _robust_z(demo, field)
        assert z[demo.clean].max() < 5.5, field
    assert np.all(_robust_z(demo, "density")[demo.planted("label-outlier")] > 10)




# --- rings and tides ---------------------------------------------------------------------------
def _ring_planets(demo: Demo) -> tuple[np.ndarray, np.ndarray]:
    """Clean rings (ring rows and planets with ring columns) and the planet row of each."""
    s = demo.si
    rings = np.flatnonzero(demo.clean & np.isfinite(s["ring_outer"]))
    is_row = s["family"][rings] == "ring"
    return rings, np.where(is_row, demo.parent[rings], rings)


def test_clean_rings_lie_between_their_planet_and_the_roche_limit(demo: Demo) -> None:
    s = demo.si
    rings, planet = _ring_planets(demo)
    assert (s["family"][rings] == "ring").sum() > 50 and (s["family"][rings] != "ring").sum() > 50
    radius = s["radius"][planet]
    assert np.all(s["ring_inner"][rings] > 1.0) and np.all(
        s["ring_outer"][rings] > 1.1 * s["ring_inner"][rings])
    # Fluid Roche limit 2.44 R (rho_M / rho_m)^(1/3) (Roche 1849) for the ring's material, solid
    # ice (917 kg/m3, CRC Handbook) where the catalogue leaves it out: no clean ring reaches it.
    material = np.nan_to_num(s["ring_density"][rings], nan=917.0)
    fluid = orbits.roche_fluid(radius, s["density"][planet], material)
    assert np.all(s["ring_outer"][rings] * radius < fluid)
    # Nor does any clean body orbit within a clean ring's span.
    for ring, host in zip(rings, planet, strict=True):
        moons = np.flatnonzero(orbiting(demo) & (demo.parent == host))
        assert np.all(s["a"][moons] > s["ring_outer"][ring] * s["radius"][host])


def test_clean_moons_orbit_both_ways(demo: Demo) -> None:
    moons = orbiting(demo) & np.isin(demo.si["family"], ["rock", "ice"]) & (
        demo.catalogue["orbit_sense"].is_not_null().to_numpy())
    share = demo.si["retrograde"][moons].mean()
    assert 0.05 < share < 0.15  # kinds.MOON_RETROGRADE_SHARE = 0.1


def _families(demo: Demo, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rigidity and Q of the families of ``rows`` (families.FAMILY_PARAMETERS)."""
    fam = demo.si["family"][rows]
    return (np.array([FAMILY_PARAMETERS[f].rigidity for f in fam]),
            np.array([FAMILY_PARAMETERS[f].quality_factor for f in fam]))


def test_tides_have_damped_the_clean_eccentricities(demo: Demo) -> None:
    # Heat E = 21/2 k2/Q G M^2 R^5 n e^2 / a^6 (Peale, Cassen & Reynolds 1979) with each family's
    # k2/Q: a generator that lets tides circularise orbits leaves almost no clean body heated
    # beyond Io's 2.4 W/m2 (1e14 W, REFERENCES.md); the untouched demo had ~3 % of them.
    s = demo.si
    rows = np.flatnonzero(orbiting(demo) & ~np.isin(s["family"], ["star", "white_dwarf",
                                                                  "neutron_star", "black_hole"]))
    rigidity, q = _families(demo, rows)
    k2 = orbits.love_number_k2(s["mass"][rows], s["radius"][rows], rigidity)
    power = tides.tidal_heating_power(s["a"][rows], s["e"][rows], s["mass"][rows],
                                      s["radius"][rows], s["mass"][demo.parent[rows]], k2 / q)
    flux = tides.surface_heat_flux(power, s["radius"][rows])
    assert np.mean(flux > tides.IO_HEAT_FLUX) < 1e-3


def test_clean_moons_are_not_caught_falling_in(demo: Demo) -> None:
    # Constant-Q decay (Jackson, Greenberg & Barnes 2008): a moon inside its planet's synchronous
    # orbit (or retrograde) whose decay time is shorter than its age has fallen already.
    s = demo.si
    moons = np.flatnonzero(orbiting(demo) & (demo.parent[np.maximum(demo.parent, 0)] >= 0))
    planet = demo.parent[moons]
    rigidity, q = _families(demo, planet)
    q_prime = tides.modified_quality_factor(
        orbits.love_number_k2(s["mass"][planet], s["radius"][planet], rigidity), q)
    rigid = orbits.roche_rigid(s["radius"][planet], s["density"][planet], s["density"][moons])
    end = np.maximum(s["radius"][planet] + s["radius"][moons], rigid)
    life = tides.tidal_decay_time(s["a"][moons], end, s["mass"][planet], s["radius"][planet],
                                  s["mass"][moons], q_prime)
    period = orbits.kepler_period(s["a"][moons], s["mass"][planet], s["mass"][moons])
    decaying = s["retrograde"][moons] | (period < 0.99 * s["rotation"][planet])
    short = decaying & (life < 0.01 * s["age"][moons])
    assert short.sum() <= 2  # a planted lock can slow a clean moon's planet (documented)
