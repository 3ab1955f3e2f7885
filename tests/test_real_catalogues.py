"""Two real published catalogues, one row per planet with host columns, through the command
line's options and the real engine (issue 12).

- TEPCat (Southworth 2011, MNRAS 417, 2166), as shipped in the spright 25.6.3 wheel;
- exoplanet.eu (Schneider et al. 2011, A&A 532, A79), as shipped in the same wheel;
- the NASA Exoplanet Archive (Akeson et al. 2013, PASP 125, 989) of 2019-05-31, a VOTable
  shipped in the EXOSIMS 3.6.6 wheel.

Both are fetched with ``pip download`` into ~/.cache/bodycensus-test-data (``real_catalogues``).
The false-alarm rates of issue 12 were judged finding by finding with an independent check (the
other catalogue's values for the same planet; tests/real_judge.py): here the findings judged
false there must stay gone, and the true problems found must stay found.
"""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest
from real_catalogues import ARCHIVE_TABLES, CATALOGUES

from bodycensus.cli.check import check_options
from bodycensus.cli.main import build_parser
from bodycensus.engines.local import CheckResult, check_file


@pytest.fixture(scope="module")
def checked(tmp_path_factory: pytest.TempPathFactory) -> dict[str, CheckResult]:
    work = tmp_path_factory.mktemp("real")
    results = {}
    for name, prepare in CATALOGUES.items():
        source, options = prepare(work)
        args = build_parser().parse_args(["check", str(source), *options, "--no-artefacts"])
        results[name] = check_file(source, work / name, check_options(args))
    return results


def _bodies_with(result: CheckResult, severities: tuple[str, ...]) -> int:
    return result.findings.filter(pl.col("severity").is_in(severities))["body"].n_unique()


def _found(result: CheckResult, rule: str) -> dict[str, str]:
    part = result.findings.filter(pl.col("rule") == rule)
    return dict(zip(part["body"], part["severity"], strict=True))


def test_planets_and_their_hosts_are_read(checked: dict[str, CheckResult]) -> None:
    tepcat, eu = checked["tepcat"], checked["exoplanet_eu"]
    assert tepcat.summary["rows"] == 2 * 3598  # a host of its own for each planet (no host name)
    assert eu.summary["rows"] > 7317 + 4000  # planets, and one row per named host
    notes = " ".join(tepcat.report.notes if tepcat.report else [])
    assert "column 14 'err' (repeated) read as 'Teff_err'" in notes
    assert "cells reading '-1' taken as empty" in notes


def test_error_and_impossible_findings_stay_rare(checked: dict[str, CheckResult]) -> None:
    # Issue 12's target: at most 0.1 % of bodies with a FALSE error or impossible finding. The
    # judged run found none false in TEPCat and 1 in exoplanet.eu; what remains is true
    # (incomplete records, unreadable cells, values that the other catalogue contradicts) or
    # doubtful. Bounds here: the counts of the judged run, so a regression shows.
    tepcat, eu = checked["tepcat"], checked["exoplanet_eu"]
    assert _bodies_with(tepcat, ("error", "impossible")) <= 4
    assert _bodies_with(eu, ("impossible",)) <= 24
    missing = eu.findings.filter(pl.col("rule") == "missing-value")
    assert missing.height <= 268  # was 1,794: a follows from P and the host mass for the rest


def test_false_alarms_of_issue_12_are_gone(checked: dict[str, CheckResult]) -> None:
    eu, tepcat = checked["exoplanet_eu"], checked["tepcat"]
    # white-dwarf and pulsar hosts: degenerate stars, not unit slips (was 69 false unit slips)
    assert not {"AE 1", "GALEX 0718+3731", "WD 0137-349"} & set(_found(eu, "unit-slip"))
    assert {"AE 1", "PSR J1317-0157", "WD 1856+534"} <= set(_found(eu, "degenerate-star"))
    # brown-dwarf hosts labelled as stars: a labelling suspect, never impossible
    assert set(_found(eu, "under-hydrogen-burning").values()) == {"suspect"}
    # TEPCat's 0 +X masses are upper limits, not non-positive masses (was 166)
    assert len(_found(tepcat, "non-positive")) <= 1
    assert len(_found(tepcat, "mass-upper-limit")) >= 150
    # 1I/'Oumuamua and 2I/Borisov are on unbound orbits: a note
    assert _found(eu, "bad-eccentricity") == {"ISO 1I": "note", "ISO 2I": "note"}
    # giants, white dwarfs and M dwarfs among the hosts are no label outliers (was 242)
    hosts = eu.findings.filter((pl.col("rule") == "label-outlier")
                               & (pl.col("label") == "host star"))
    assert hosts.height == 0


def test_true_problems_in_the_published_data_are_found(checked: dict[str, CheckResult]) -> None:
    eu, tepcat = checked["exoplanet_eu"], checked["tepcat"]
    # TEPCat's TRAPPIST-1 d is 8.8x denser than exoplanet.eu's (43.6 g/cm3: denser than iron)
    assert _found(tepcat, "denser-than-iron") == {"TRAPPIST-1d": "impossible"}
    # exoplanet.eu gives HD 184010 b the period of c (484 d; b's a of 0.937 au means ~287 d)
    assert _found(eu, "duplicate-orbit").get("HD 184010 c") == "suspect"
    assert "HD 184010 b" in _found(eu, "kepler-mismatch")
    # two brown dwarfs that list each other as their host
    assert set(_found(eu, "parent-cycle")) == {"2MASS J1450-7841 A", "2MASS J1450-7841 B"}
    # mass uncertainties written as inf or nan
    assert "GJ 143 c" in _found(eu, "bad-cell")
    # every mismatch with Kepler's law over 20 % stays found (issue 12: all were real)
    mismatch = eu.findings.filter(pl.col("rule") == "kepler-mismatch")
    assert mismatch.filter((pl.col("value") - 1).abs() > 0.2).height >= 160


def test_an_archive_votable_is_read_with_the_units_of_its_metadata(tmp_path: Path) -> None:
    # The NASA Exoplanet Archive's planets table (2019-05-31, a VOTable; Akeson et al. 2013),
    # shipped in the EXOSIMS 3.6.6 wheel: no unit in any column name, every unit in the
    # metadata ('jovMass', 'days', 'solMass', ...), one row per planet with host columns.
    name, prepare = next(iter(ARCHIVE_TABLES.items()))
    source, options = prepare(tmp_path)
    args = build_parser().parse_args(["check", str(source), *options, "--no-artefacts"])
    result = check_file(source, tmp_path / name, check_options(args))
    notes = result.report.notes if result.report else []
    assert "mass from 'pl_bmassj' in jupiter_mass (the file's metadata: 'jovMass')" in notes
    assert "host mass from 'st_mass' in solar_mass (the file's metadata: 'solMass')" in notes
    assert result.summary["rows"] == 3972 + 2963  # planets, and one row per host
    assert not _bodies_with(result, ("impossible",))
    mismatch = result.findings.filter(pl.col("rule") == "kepler-mismatch")
    assert mismatch.filter((pl.col("value") - 1).abs() > 0.2).height >= 70
