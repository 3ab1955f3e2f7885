"""The Roche plane: the rigid and fluid Roche limits and the parent's surface as lines."""

from __future__ import annotations

import math
from typing import Any

import pytest

from bodycensus.diagrams import roche
from bodycensus.diagrams.shapes import Choice


@pytest.fixture(scope="module")
def diagram(engine_aggs: dict[str, Any]) -> Any:
    return engine_aggs["diagrams"]["roche"]


def test_roche_plane_and_its_flagged_moon(diagram: Any) -> None:
    assert sum(map(sum, diagram["z"])) == 100  # every body with a parent
    # rigid 2^(1/3) = 1.26 (Shu 1982) and fluid 2.44 (Roche 1849) coefficients
    coefficients = sorted(line["coefficient"] for line in diagram["lines"])
    assert coefficients == pytest.approx([1.26, 2.44], rel=1e-3)
    first = diagram["flagged"][0]
    assert (first["body"], first["severity"]) == ("moon-0", "impossible")
    # moon-0 was placed inside the rigid Roche limit: under the line y = 1.26 x
    assert 10 ** first["y"] < 1.26 * 10 ** first["x"]


def test_roche_plane_has_rigid_and_fluid_lines(diagram: Any) -> None:
    fig = roche.figure(diagram, Choice())
    lines = {t["name"].split(" (")[0]: t for t in fig["data"] if t.get("meta") == "reference"}
    assert set(lines) == {"rigid Roche limit", "fluid Roche limit", "parent surface"}
    for name, coefficient in (("rigid Roche limit", 2 ** (1 / 3)), ("fluid Roche limit", 2.44)):
        x, y = lines[name]["x"], lines[name]["y"]
        # on log axes the line y = c x is y' = log10(c) + x' (Roche 1849; Shu 1982)
        assert y[0] - x[0] == pytest.approx(math.log10(coefficient))
        assert y[1] - x[1] == pytest.approx(math.log10(coefficient))
    flagged = [t for t in fig["data"] if t.get("meta") == "flagged"]
    assert flagged[0]["customdata"] == ["moon-0"]
