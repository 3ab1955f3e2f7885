"""The demo catalogue: deterministic, exact ground truth, clean bodies physically sound.

Physics is checked with physics/ directly (not through the rules engine), each check naming its
published source (../shared/REFERENCES.md).
"""

from __future__ import annotations

import gzip
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import polars as pl
import pytest
from bodycensus.demo import COLUMNS, TRUTH_COLUMNS, generate_demo, truth_path, write_demo
from bodycensus.families import FAMILY_PARAMETERS, guess_family
from bodycensus.physics import bodies, orbits
from bodycensus.units import AU, DAY, HOUR, M_EARTH, M_JUPITER, M_SUN, YEAR

N = 20_000
RULES = (  # issue 2, item 6 (plus bad-cell for unreadable cells)
    "missing-value", "non-positive", "duplicate-id", "orphan-parent", "parent-cycle", "unit-slip",
    "bad-eccentricity", "bad-cell", "denser-than-iron", "family-density", "oversized-cold-body",
    "over-chandrasekhar", "over-neutron-star-max", "under-hydrogen-burning", "brown-dwarf-range",
    "periapsis-inside-parent", "inside-rigid-roche", "inside-fluid-roche", "roche-lobe-overflow",
    "outside-hill-sphere", "beyond-stable-hill", "kepler-mismatch", "crossing-orbits",
    "hill-spacing", "heavier-than-parent", "binary-barycentre", "tidal-lock-age", "label-outlier",
)
SEAGER = {"iron": "iron", "rock": "rock", "water_ice": "water_ice"}


@dataclass
class Demo:
    """The catalogue in SI numpy arrays, with parent rows and the truth."""

    catalogue: pl.DataFrame
    truth: pl.DataFrame
    si: dict[str, np.ndarray]
    parent: np.ndarray  # row of the parent, -1 for none or dangling
    clean: np.ndarray  # rows the truth does not name

    def planted_ids(self, rule: str, column: str = "body") -> list[str]:
        """Ids the truth names for ``rule``."""
        return self.truth.filter(pl.col("rule") == rule)[column].to_list()

    def planted(self, rule: str, column: str = "body") -> np.ndarray:
        """Rows of the bodies planted for ``rule`` (first row of a duplicated id)."""
        first = {v: i for i, v in reversed(list(enumerate(self.catalogue["id"].to_list())))}
        return np.array([first[i] for i in self.planted_ids(rule, column)])


def _si(cat: pl.DataFrame) -> dict[str, np.ndarray]:
    scale = {"mass (earth_mass)": ("mass", M_EARTH), "radius_km": ("radius", 1e3),
             "a (au)": ("a", AU), "e": ("e", 1.0), "period_days": ("period", DAY),
             "rotation_h": ("rotation", HOUR), "age_gyr": ("age", 1e9 * YEAR)}
    out = {name: cat[col].to_numpy().astype(float) * f for col, (name, f) in scale.items()}
    out["locked"] = cat["locked"].fill_null(False).to_numpy()
    out["family"] = np.array([guess_family(label) for label in cat["type"].to_list()])
    out["density"] = bodies.bulk_density(out["mass"], out["radius"])
    return out


@pytest.fixture(scope="session", params=[7, 2024])
def demo(request: pytest.FixtureRequest) -> Demo:
    catalogue, truth = generate_demo(N, seed=request.param)
    ids = catalogue["id"].to_list()
    row = {v: i for i, v in reversed(list(enumerate(ids)))}
    parent = np.array([row.get(p, -1) if p else -1 for p in catalogue["orbits"].to_list()])
    named = set(truth["body"].drop_nulls()) | set(truth["other"].drop_nulls())
    clean = np.array([i not in named for i in ids])
    return Demo(catalogue, truth, _si(catalogue), parent, clean)


def _orbiting(d: Demo) -> np.ndarray:
    """Clean rows with a clean parent."""
    return d.clean & (d.parent >= 0) & d.clean[np.maximum(d.parent, 0)]


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
    registry = pytest.importorskip("bodycensus.rules")
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
    s, rows = demo.si, np.flatnonzero(_orbiting(demo))
    par = demo.parent[rows]
    peri = orbits.periapsis(s["a"][rows], s["e"][rows])
    # Fluid Roche limit 2.44 R_M (rho_M / rho_m)^(1/3) (Roche 1849): no clean body inside it.
    fluid = orbits.roche_fluid(s["radius"][par], s["density"][par], s["density"][rows])
    assert np.all(peri > 1.1 * fluid)
    assert np.all(peri > 1.5 * s["radius"][par])
    assert np.all((s["e"][rows] >= 0) & (s["e"][rows] < 0.8))


def test_clean_moons_sit_well_inside_the_stable_hill_region(demo: Demo) -> None:
    s, par = demo.si, np.maximum(demo.parent, 0)
    moons = np.flatnonzero(_orbiting(demo) & (demo.parent[par] >= 0))
    assert len(moons) > 1000
    planet, star = demo.parent[moons], demo.parent[demo.parent[moons]]
    hill = orbits.hill_radius(s["a"][planet], s["e"][planet], s["mass"][planet], s["mass"][star])
    # Prograde stability limit 0.4895 (1 - 1.0305 e_p - 0.2738 e_s) r_H (Domingos et al. 2006).
    limit = orbits.stable_hill_fraction(s["e"][planet], s["e"][moons]) * hill
    assert np.all(orbits.apoapsis(s["a"][moons], s["e"][moons]) < 0.7 * limit)


def test_clean_periods_follow_kepler_within_half_a_percent(demo: Demo) -> None:
    s, rows = demo.si, np.flatnonzero(_orbiting(demo))
    # P = 2 pi sqrt(a^3 / G(M+m)) (Kepler's third law, Newton's form; REFERENCES.md).
    kepler = orbits.kepler_period(s["a"][rows], s["mass"][demo.parent[rows]], s["mass"][rows])
    assert np.max(np.abs(s["period"][rows] / kepler - 1.0)) < 0.005
    assert np.all(s["mass"][rows] < s["mass"][demo.parent[rows]])  # lighter than the parent


def test_clean_siblings_neither_cross_nor_crowd(demo: Demo) -> None:
    s, rows = demo.si, np.flatnonzero(_orbiting(demo))
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


def _band(family: str, mass: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The family's density band at this mass, from families.FAMILY_PARAMETERS and physics."""
    curves = {"cold_hhe": bodies.cold_hhe_density, "white_dwarf": bodies.white_dwarf_density,
              "main_sequence": bodies.main_sequence_density,
              **{k: (lambda m, k=k: bodies.composition_density(m, k)) for k in SEAGER}}
    band = FAMILY_PARAMETERS[family].density_band
    assert band is not None

    def edge(curve: str, factor: float) -> np.ndarray:
        return np.full(len(mass), factor) if curve == "const" else factor * curves[curve](mass)

    return edge(band.low_curve, band.low_factor), edge(band.high_curve, band.high_factor)


def test_clean_densities_inside_family_bands(demo: Demo) -> None:
    s = demo.si
    for family in set(s["family"]) - {"black_hole"}:
        rows = demo.clean & (s["family"] == family)
        low, high = _band(family, s["mass"][rows])
        assert np.all((s["density"][rows] > low) & (s["density"][rows] < high)), family
        if family in ("iron", "rock", "rock_ice", "ice", "ocean", "minor"):
            # Seager et al. 2007 pure-iron curve: nothing solid is denser than iron at its mass.
            iron = bodies.composition_density(s["mass"][rows], "iron")
            assert np.all(s["density"][rows] < 1.05 * iron), family


def test_clean_stars_and_remnants_respect_mass_limits(demo: Demo) -> None:
    s, c = demo.si, demo.clean
    mass = {f: s["mass"][c & (s["family"] == f)] for f in ("star", "brown_dwarf", "white_dwarf",
                                                           "neutron_star")}
    assert mass["star"].min() > 0.09 * M_SUN  # hydrogen burning ~0.075 M_sun (Burrows & Liebert 1993)
    assert mass["brown_dwarf"].min() > 13 * M_JUPITER  # deuterium burning (Spiegel et al. 2011)
    assert mass["brown_dwarf"].max() < 0.075 * M_SUN
    assert mass["white_dwarf"].max() < 1.44 * M_SUN  # Chandrasekhar 1935
    assert mass["neutron_star"].max() < 2.3 * M_SUN  # heaviest measured ~2.35 (Romani et al. 2022)
    cold = c & np.isin(s["family"], ["gas_giant", "brown_dwarf"])
    # Cold H/He bodies are ~1 R_jup (Burrows & Liebert 1993); hot ones inflate to ~2 R_jup.
    assert np.all(s["radius"][cold] < 2.0 * bodies.cold_hhe_radius(s["mass"][cold]))


def test_clean_lock_flags_match_the_despin_time(demo: Demo) -> None:
    s, rows = demo.si, np.flatnonzero(_orbiting(demo) & demo.si["locked"])
    assert len(rows) > 1000
    rigidity = np.array([FAMILY_PARAMETERS[f].rigidity for f in s["family"][rows]])
    q = np.array([FAMILY_PARAMETERS[f].quality_factor for f in s["family"][rows]])
    # Despin time w a^6 I Q / (3 G m_p^2 k2 R^5) (Gladman et al. 1996): locked only if < age.
    t_lock = orbits.tidal_lock_time(s["a"][rows], s["mass"][rows], s["radius"][rows],
                                    s["mass"][demo.parent[rows]], rigidity, q)
    assert np.all(t_lock < s["age"][rows] * 1.01)
    assert np.allclose(s["rotation"][rows], s["period"][rows], rtol=1e-4)


def _robust_z(demo: Demo, field: str) -> np.ndarray:
    """Modified z-score 0.6745 (x - median) / MAD of log10 ``field`` within each label
    (Iglewicz & Hoaglin 1993)."""
    z = np.zeros(N)
    labels = demo.catalogue["type"].to_numpy()
    for label in set(labels):
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


# --- planted bodies break their rule, measured with physics directly --------------------------
def _limits(demo: Demo, rows: np.ndarray) -> dict[str, np.ndarray]:
    s, par = demo.si, demo.parent[rows]
    return {
        "peri": orbits.periapsis(s["a"][rows], s["e"][rows]), "R": s["radius"][par],
        "rigid": orbits.roche_rigid(s["radius"][par], s["density"][par], s["density"][rows]),
        "fluid": orbits.roche_fluid(s["radius"][par], s["density"][par], s["density"][rows]),
        "hill": orbits.hill_radius(s["a"][par], s["e"][par], s["mass"][par],
                                   s["mass"][demo.parent[par]]),
        "stable": orbits.stable_hill_fraction(s["e"][par], s["e"][rows]),
    }


def test_planted_orbits_break_their_limits(demo: Demo) -> None:
    s = demo.si
    lim = {rule: _limits(demo, demo.planted(rule)) for rule in (
        "periapsis-inside-parent", "inside-rigid-roche", "inside-fluid-roche",
        "outside-hill-sphere", "beyond-stable-hill")}
    assert np.all(lim["periapsis-inside-parent"]["peri"] < lim["periapsis-inside-parent"]["R"])
    rigid = lim["inside-rigid-roche"]  # Shu 1982: d = R_M (2 rho_M / rho_m)^(1/3)
    assert np.all((rigid["R"] < rigid["peri"]) & (rigid["peri"] < rigid["rigid"]))
    fluid = lim["inside-fluid-roche"]  # Roche 1849: 2.44 R_M (rho_M / rho_m)^(1/3)
    assert np.all((fluid["rigid"] < fluid["peri"]) & (fluid["peri"] < fluid["fluid"]))
    out = demo.planted("outside-hill-sphere")
    assert np.all(s["a"][out] > lim["outside-hill-sphere"]["hill"])
    beyond, b = demo.planted("beyond-stable-hill"), lim["beyond-stable-hill"]
    assert np.all((b["stable"] * b["hill"] < s["a"][beyond]) & (s["a"][beyond] < b["hill"]))
    kepler = demo.planted("kepler-mismatch")
    ratio = s["period"][kepler] / orbits.kepler_period(
        s["a"][kepler], s["mass"][demo.parent[kepler]], s["mass"][kepler])
    assert np.all(np.abs(ratio - 1) > 0.05)


def test_planted_siblings_cross_or_crowd(demo: Demo) -> None:
    s = demo.si
    outer, inner = demo.planted("crossing-orbits"), demo.planted("crossing-orbits", "other")
    assert np.all(orbits.apoapsis(s["a"][inner], s["e"][inner])
                  > orbits.periapsis(s["a"][outer], s["e"][outer]))
    outer, inner = demo.planted("hill-spacing"), demo.planted("hill-spacing", "other")
    mutual = orbits.mutual_hill_radius(s["a"][inner], s["mass"][inner], s["mass"][outer],
                                       s["mass"][demo.parent[inner]])
    assert np.all((s["a"][outer] - s["a"][inner]) / mutual < 2 * math.sqrt(3))  # Gladman 1993
    assert np.all(orbits.apoapsis(s["a"][inner], s["e"][inner])
                  < orbits.periapsis(s["a"][outer], s["e"][outer]))


def test_planted_pairs_and_locks(demo: Demo) -> None:
    s = demo.si
    heavy = demo.planted("heavier-than-parent")
    assert np.all(s["mass"][heavy] > s["mass"][demo.parent[heavy]])
    bary = demo.planted("binary-barycentre")
    offset = orbits.barycentre_offset(s["a"][bary], s["mass"][demo.parent[bary]], s["mass"][bary])
    assert np.all(offset > s["radius"][demo.parent[bary]])
    lobe = demo.planted("roche-lobe-overflow")  # Eggleton 1983 volume-equivalent lobe radius
    r_lobe = orbits.roche_lobe_radius(orbits.periapsis(s["a"][lobe], s["e"][lobe]),
                                      s["mass"][lobe] / s["mass"][demo.parent[lobe]])
    assert np.all(s["radius"][lobe] > r_lobe)
    lock = demo.planted("tidal-lock-age")  # softest parameters: ice rigidity, Q = 100
    t_lock = orbits.tidal_lock_time(s["a"][lock], s["mass"][lock], s["radius"][lock],
                                    s["mass"][demo.parent[lock]], 4e9, 100.0)
    assert np.all(s["locked"][lock] & (t_lock > 10 * s["age"][lock]))


def test_planted_bodies_break_their_limits(demo: Demo) -> None:
    s = demo.si

    def mass(rule: str) -> np.ndarray:
        return s["mass"][demo.planted(rule)]

    assert np.all(mass("over-chandrasekhar") > 1.44 * M_SUN)
    assert np.all(mass("over-neutron-star-max") > 3.0 * M_SUN)
    assert np.all(mass("under-hydrogen-burning") < 0.075 * M_SUN)
    assert np.all(mass("brown-dwarf-range") < 13 * M_JUPITER)
    iron = demo.planted("denser-than-iron")  # Seager et al. 2007 Fe(eps) curve
    assert np.all(s["density"][iron] > 1.05 * bodies.composition_density(s["mass"][iron], "iron"))
    dense = demo.planted("family-density")
    _, high = _band("gas_giant", s["mass"][dense])
    assert np.all(s["density"][dense] > high)
    big = demo.planted("oversized-cold-body")
    assert np.all(s["radius"][big] > 2 * bodies.cold_hhe_radius(s["mass"][big]))
    slip = demo.planted("unit-slip")
    ratio = s["radius"][slip] / bodies.composition_radius(s["mass"][slip], "rock")
    assert np.all((ratio > 300) & (ratio < 3000))  # metres in the km column


def test_planted_data_errors(demo: Demo) -> None:
    s, cat = demo.si, demo.catalogue
    assert np.all(np.isnan(s["a"][demo.planted("missing-value")]))
    assert np.all(s["rotation"][demo.planted("non-positive")] < 0)
    assert np.all(s["e"][demo.planted("bad-eccentricity")] < 0)
    ids = cat["id"].value_counts().filter(pl.col("count") > 1)["id"]
    assert sorted(ids) == sorted(demo.planted_ids("duplicate-id"))
    orphans = cat.filter(pl.col("orbits").is_not_null() & ~pl.col("orbits").is_in(cat["id"]))
    assert sorted(orphans["id"]) == sorted(demo.planted_ids("orphan-parent"))
    cycle = demo.planted("parent-cycle")
    assert np.all(demo.parent[demo.parent[cycle]] == cycle)


# --- the three generator artefacts -------------------------------------------------------------
def _artefact(demo: Demo, kind: str) -> dict[str, object]:
    return demo.truth.filter(pl.col("rule") == kind).row(0, named=True)


def test_artefacts_are_where_the_truth_says(demo: Demo) -> None:
    s, labels = demo.si, demo.catalogue["type"].to_numpy()
    cutoff = _artefact(demo, "cutoff")
    radius = s["radius"][labels == cutoff["label"]]
    assert radius.min() >= cutoff["at"] and np.mean(radius < 1.2 * cutoff["at"]) > 0.01
    gap = _artefact(demo, "gap")
    spin = s["rotation"][labels == gap["label"]]
    assert not np.any((spin >= gap["low"]) & (spin <= gap["high"]))
    assert np.sum(spin < gap["low"]) > 100 and np.sum(spin > gap["high"]) > 100
    spike = _artefact(demo, "spike")
    mass = s["mass"][labels == spike["label"]]
    held = np.isclose(mass, spike["at"], rtol=1e-9)
    assert 0.025 < held.mean() < 0.06
    assert np.unique(mass[~held], return_counts=True)[1].max() <= 3


def test_clean_companion_stars_fit_their_roche_lobes(demo: Demo) -> None:
    s, star = demo.si, np.isin(demo.si["family"], ["star", "brown_dwarf", "white_dwarf"])
    rows = np.flatnonzero(_orbiting(demo) & star)
    assert len(rows) > 100
    # Eggleton 1983: r_L / a = 0.49 q^(2/3) / (0.6 q^(2/3) + ln(1 + q^(1/3))), at periapsis.
    lobe = orbits.roche_lobe_radius(orbits.periapsis(s["a"][rows], s["e"][rows]),
                                    s["mass"][rows] / s["mass"][demo.parent[rows]])
    assert np.all(s["radius"][rows] < 0.5 * lobe)
