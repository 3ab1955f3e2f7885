"""The remaining-life diagram: per label, the tidal decay time left over the system's age, on a
catalogue checked by the real engine, with one age and the short-lived-orbit limit."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from catalogue_builder import SUN_LIKE, run

from bodycensus.diagrams import lifetimes
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.diagrams.shapes import Choice
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.units import AU, DAY, M_JUPITER, R_JUPITER

STAR = {**SUN_LIKE, "rotation_period": 25 * DAY}  # the Sun spins in ~25 d (from memory)


def _giant(body_id: str, a_au: float, label: str = "hot jupiter") -> dict:
    return {"id": body_id, "label": label, "family": "gas_giant", "parent": "S",
            "mass": M_JUPITER, "radius": 1.2 * R_JUPITER, "semi_major_axis": a_au * AU,
            "eccentricity": 0.0, "age": 4.6e9}


@pytest.fixture(scope="module")
def workdir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    work = tmp_path_factory.mktemp("lifetimes")
    # Constant-Q decay (Jackson, Greenberg & Barnes 2008) with the star family's Q' = 1e6, to the
    # planet's fluid Roche limit (0.0142 au): 0.2 % of the Sun's age left at 0.018 au, 7 % at
    # 0.03 au, 2 ages at 0.05 au (computed).
    run([STAR, _giant("doomed", 0.018), _giant("lasting", 0.03), _giant("far", 0.05, "warm")],
        work)
    return work


def test_decaying_orbits_are_counted_per_label_and_the_short_one_flagged(workdir: Path) -> None:
    diagram = compute_aggregates(workdir)["diagrams"]["remaining-life"]
    counts = {s["label"]: sum(s["counts"]) for s in diagram["series"]}
    assert counts == {"hot jupiter": 2, "warm": 1}
    flagged = {r["body"]: r for r in diagram["flagged"]}
    assert {b: r["severity"] for b, r in flagged.items()} == {"doomed": "unstable",
                                                              "lasting": "note"}
    assert flagged["doomed"]["x"] < diagram["limit"] == math.log10(0.01) < flagged["lasting"]["x"]


def test_the_limit_follows_the_settings_the_catalogue_was_checked_with(workdir: Path) -> None:
    diagram = compute_aggregates(workdir, OrbitSettings(short_life_fraction=1e-4))
    limit = diagram["diagrams"]["remaining-life"]["limit"]
    assert limit == pytest.approx(-4.0)


def test_one_label_or_every_label(workdir: Path) -> None:
    diagram = compute_aggregates(workdir)["diagrams"]["remaining-life"]
    chosen = lifetimes.choices(diagram, Choice(label="warm"))
    assert chosen.label == "warm" and chosen.all_labels
    fig = lifetimes.figure(diagram, chosen.choice)
    assert sum(fig["data"][0]["y"]) == 1
    every = lifetimes.figure(diagram, Choice())
    assert sum(every["data"][0]["y"]) == 3
    assert {"one system age", "short-lived-orbit limit"} <= {t.get("name") for t in every["data"]}


def test_without_decaying_orbits_there_is_a_sentence() -> None:
    fig = lifetimes.figure(None, Choice())
    assert fig["data"] == [] and "decays" in fig["layout"]["annotations"][0]["text"]
