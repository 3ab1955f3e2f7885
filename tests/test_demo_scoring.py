"""The demo scored through the real engine, as `bodycensus demo --score` does: every planted rule
defect found (recall 1.0) and no clean body called `error` or `impossible`.

The artefacts are not asserted here: at 20,000 bodies the ice-giant spin gap sits about five
bins above the lowest spin, where the gap detector needs five bins of context, so it is found
for seed 7 (the bundled sample) and missed for seed 2024, on main as on this branch."""

from __future__ import annotations

from pathlib import Path

from demo_support import Demo, demo

from bodycensus.demo.scoring import score, score_text
from bodycensus.engines.local import CheckOptions, check_file

__all__ = ["demo"]  # the session fixture


def test_every_planted_defect_is_found_and_no_clean_body_is_impossible(
        demo: Demo, tmp_path: Path) -> None:
    source = tmp_path / "demo.csv"
    demo.catalogue.write_csv(source)
    result = check_file(source, tmp_path / "run", CheckOptions())
    found = score(result.findings, result.artefacts, demo.truth, demo.catalogue["id"],
                  result.families)
    report = score_text(found)
    assert found.recall == 1.0, report
    assert found.false_impossible_rate == 0.0, report
