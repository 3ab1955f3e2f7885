"""Bodies of real catalogues that the rules must leave alone (or judge rightly): super-puffs,
young brown dwarfs, inflated hot Jupiters and M dwarfs among FGK hosts (issue 12)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from catalogue_builder import SUN_LIKE, fired, run

from bodycensus.science.physics.bodies import main_sequence_radius
from bodycensus.science.physics.orbits import kepler_period
from bodycensus.science.units import AU, M_EARTH, M_JUPITER, M_SUN, R_EARTH, R_JUPITER


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


def test_m_dwarfs_among_fgk_hosts_are_no_label_outliers(tmp_path: Path) -> None:
    # main-sequence hosts of 0.8-1.3 M_sun (R ~ M^0.8, 5 % scatter) and three M dwarfs of
    # 0.15-0.3 M_sun on the same relation: the band moves with mass, so none is an outlier; a
    # 1 M_sun host three times its main-sequence radius (a subgiant) is one.
    rng = np.random.default_rng(1)
    masses = np.concatenate([rng.uniform(0.8, 1.3, 40), [0.15, 0.2, 0.3]]) * M_SUN
    radii = main_sequence_radius(masses) * rng.uniform(0.95, 1.05, masses.size)
    rows = [{"id": f"h{i}", "label": "host star", "family": "star", "mass": float(m),
             "radius": float(r)} for i, (m, r) in enumerate(zip(masses, radii, strict=True))]
    rows.append({"id": "swollen", "label": "host star", "family": "star", "mass": M_SUN,
                 "radius": 3.0 * float(main_sequence_radius(M_SUN))})
    assert fired(run(rows, tmp_path), "label-outlier") == {"swollen": "suspect"}
