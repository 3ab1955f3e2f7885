"""Bodies of real catalogues that the rules must leave alone (or judge rightly): super-puffs,
young brown dwarfs, inflated hot Jupiters and M dwarfs among FGK hosts (issue 12)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from catalogue_builder import SUN_LIKE, fired, run

from bodycensus.science.physics.bodies import composition_radius, main_sequence_radius
from bodycensus.science.physics.orbits import kepler_period
from bodycensus.science.units import AU, M_EARTH, M_JUPITER, M_SUN, R_EARTH, R_JUPITER, R_SUN


def _planet(body_id: str, label: str, family: str, mass: float, radius: float,
            a: float) -> dict:
    return {"id": body_id, "label": label, "family": family, "parent": "S", "mass": mass,
            "radius": radius, "semi_major_axis": a, "eccentricity": 0.0,
            "period": kepler_period(a, M_SUN, mass)}


def test_a_super_puff_is_inside_the_ice_giant_band(tmp_path: Path) -> None:
    # Kepler-51 b: 3.7 M_earth, 6.9 R_earth, ~60 kg/m3 (Masuda 2014, ApJ 783, 53), 0.25 au
    rows = [SUN_LIKE, _planet("puff", "sub-neptune", "ice_giant", 3.7 * M_EARTH,
                              6.9 * R_EARTH, 0.25 * AU)]
    assert run(rows, tmp_path).findings.height == 0


def test_a_young_brown_dwarf_is_no_unit_slip(tmp_path: Path) -> None:
    # issue 12's young brown dwarf: 55 M_jup at 11 R_jup (~50 kg/m3): oversized for a cold body
    # (suspect, as it should be: its youth is not in the catalogue), but no unit slip
    rows = [{"id": "bd", "label": "brown dwarf", "family": "brown_dwarf",
             "mass": 55 * M_JUPITER, "radius": 11 * R_JUPITER}]
    assert fired(run(rows, tmp_path), "oversized-cold-body") == {"bd": "suspect"}
    assert set(run(rows, tmp_path / "again").findings["rule"]) == {"oversized-cold-body"}


def test_inflated_hot_jupiters_are_left_alone_close_in(tmp_path: Path) -> None:
    # WASP-17 b: 0.486 M_jup, 1.932 R_jup at 0.0515 au (Anderson et al. 2011, MNRAS 416, 2108);
    # the same planet at 1 au would be oversized (no stellar heating to inflate it)
    hot = _planet("hot", "hot jupiter", "gas_giant", 0.486 * M_JUPITER, 1.932 * R_JUPITER,
                  0.0515 * AU)
    cold = {**hot, "id": "cold", "semi_major_axis": 1.0 * AU,
            "period": kepler_period(AU, M_SUN, 0.486 * M_JUPITER)}
    assert fired(run([SUN_LIKE, hot, cold], tmp_path), "oversized-cold-body") == {
        "cold": "suspect"}


def test_label_outliers_are_scored_at_each_bodys_own_mass(tmp_path: Path) -> None:
    # rocky planets of 0.1-10 M_earth on the Seager et al. 2007 rock curve (5 % scatter in
    # radius): their densities span 2.5x, but each sits at its own mass's place in the band,
    # so none is an outlier; one of 1 M_earth at 1.6x the curve's radius (a quarter of its
    # density) is one.
    rng = np.random.default_rng(1)
    masses = np.geomspace(0.1, 10, 40) * M_EARTH
    radii = composition_radius(masses, "rock") * rng.uniform(0.95, 1.05, masses.size)
    rows = [SUN_LIKE] + [
        _planet(f"p{i}", "rocky planet", "rock", float(m), float(r), (1 + i) * AU)
        for i, (m, r) in enumerate(zip(masses, radii, strict=True))]
    rows.append(_planet("swollen", "rocky planet", "rock", M_EARTH,
                        1.6 * float(composition_radius(M_EARTH, "rock")), 100 * AU))
    assert fired(run(rows, tmp_path), "label-outlier") == {"swollen": "suspect"}


def test_stars_are_left_to_their_band_by_label_outlier(tmp_path: Path) -> None:
    # main-sequence hosts of 0.15-1.3 M_sun (R ~ M^0.8), a K giant (1.1 M_sun, 45 R_sun) and
    # Sirius B (1.018 M_sun, 0.0081 R_sun; Bond et al. 2017) under one label: none an outlier
    masses = np.concatenate([np.linspace(0.8, 1.3, 40), [0.15, 0.2, 0.3]]) * M_SUN
    rows = [{"id": f"h{i}", "label": "host star", "family": "star", "mass": float(m),
             "radius": float(main_sequence_radius(m))} for i, m in enumerate(masses)]
    rows += [{"id": "giant", "label": "host star", "family": "star", "mass": 1.1 * M_SUN,
              "radius": 45 * R_SUN},
             {"id": "sirius_b", "label": "host star", "family": "star", "mass": 1.018 * M_SUN,
              "radius": 0.0081 * R_SUN}]
    assert "label-outlier" not in set(run(rows, tmp_path).findings["rule"])


def test_white_dwarf_and_pulsar_hosts_are_degenerate_stars(tmp_path: Path) -> None:
    # exoplanet.eu hosts: AE 1, 1.31 M_sun with its radius printed as 0.01 R_sun (Nauenberg's
    # curve gives ~0.004 R_sun at that mass: rounded); PSR B1257+12, 1.4 M_sun at ~10 km
    # (a neutron star, 6.7e17 kg/m3). Degenerate stars, not unit slips.
    rows = [{"id": "ae1", "label": "host star", "family": "star", "mass": 1.31 * M_SUN,
             "radius": 0.01 * R_SUN},
            {"id": "psr", "label": "host star", "family": "star", "mass": 1.4 * M_SUN,
             "radius": 1.0e4}]
    result = run(rows, tmp_path)
    assert fired(result, "degenerate-star") == {"ae1": "note", "psr": "note"}
    assert set(result.findings["rule"]) == {"degenerate-star"}


def test_unit_slip_hints_list_astronomical_slips_first(tmp_path: Path) -> None:
    # exoplanet.eu's AU Mic c: a radius of 2.79 in the Jupiter-radius column for 2.79 R_earth.
    # Here an Earth (NSSDCA: 5.97e24 kg, 6371 km) with its radius written as 1 R_jup: 1405x too
    # light: Earth radii read as Jupiter radii explain it, and so do three other slips; all are
    # listed, the k-prefix ones (grams for kg) last.
    rows = [SUN_LIKE, _planet("slip", "rocky planet", "rock", M_EARTH, R_JUPITER, AU)]
    result = run(rows, tmp_path)
    message = result.findings.filter(result.findings["rule"] == "unit-slip")["message"][0]
    hints = message.split("; ", 1)[1].split("; or ")
    assert "radius looks 11.21x too large (values in Earth radii read as Jupiter radii?)" in hints
    assert hints[-1] == "mass looks 1000x too small (values in kg read as grams?)"
    assert len(hints) == 4
