"""The pipeline gate of ``bodycensus check`` (cli/gate.py) and ``bodycensus compare``, run as
real processes: --fail-on-new exits 0 on an unchanged rerun and 1 when one defect is planted in
the new run; a decisions file waives what it covers and names its stale decisions."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from cli_support import CLEAN, HEADER, IRON_IMPOSSIBLE, bodycensus

from bodycensus.storage.decisions import Decision
from bodycensus.storage.decisions_file import dumps

# A second body denser than iron (Seager et al. 2007, as IRON_IMPOSSIBLE in cli_support).
PLANTED = "lead2,terrestrial planet,sol,1,4000,3,0.01,\n"


@pytest.fixture()
def runs(tmp_path: Path) -> dict[str, Path]:
    files = {"old": HEADER + CLEAN + IRON_IMPOSSIBLE, "rerun": HEADER + CLEAN + IRON_IMPOSSIBLE,
             "planted": HEADER + CLEAN + IRON_IMPOSSIBLE + PLANTED}
    out = {}
    for name, text in files.items():
        out[name] = tmp_path / f"{name}.csv"
        out[name].write_text(text)
    return out


def test_fail_on_new_passes_an_unchanged_rerun_and_stops_a_planted_defect(
        runs: dict[str, Path]) -> None:
    gate = ("--baseline", str(runs["old"]), "--fail-on-new", "impossible")
    unchanged = bodycensus("check", str(runs["rerun"]), *gate)
    assert unchanged.returncode == 0, unchanged.stderr
    assert "0 new undecided findings at or above impossible" in unchanged.stderr
    planted = bodycensus("check", str(runs["planted"]), *gate)
    assert planted.returncode == 1, planted.stderr
    assert "1 new undecided finding at or above impossible" in planted.stderr
    assert "lead2" in planted.stderr and "denser-than-iron" in planted.stderr
    assert bodycensus("check", str(runs["planted"]), "--baseline", str(runs["old"]),
                      "--fail-on-new", "error").returncode == 0  # nothing new at error


def test_a_kept_run_is_a_baseline_too(runs: dict[str, Path], tmp_path: Path) -> None:
    kept = tmp_path / "week-48"
    assert bodycensus("check", str(runs["old"]), "--keep", str(kept)).returncode == 0
    done = bodycensus("check", str(runs["planted"]), "--baseline", str(kept),
                      "--fail-on-new", "impossible", "--format", "json")
    assert done.returncode == 1, done.stderr
    assert json.loads(done.stdout)["baseline"] == {"file": str(kept), "new": 1}


def test_decisions_waive_findings_and_stale_ones_are_named(runs: dict[str, Path],
                                                            tmp_path: Path) -> None:
    decisions = tmp_path / "team.toml"
    decisions.write_text(dumps("broken", [
        Decision("finding", "denser-than-iron", "lead", "wontfix", "a test body", "Ana"),
        Decision("label", "kepler-mismatch", "ice moon", "accepted")]))
    assert bodycensus("check", str(runs["old"]), "--fail-on", "impossible").returncode == 1
    done = bodycensus("check", str(runs["old"]), "--fail-on", "impossible", "--decisions",
                      str(decisions), "--format", "json")
    assert done.returncode == 0, done.stderr
    assert "1 finding waived by 2 decisions" in done.stderr
    assert "stale decision (matches no finding): accepted: rule kepler-mismatch on label " \
           "'ice moon'" in done.stderr
    document = json.loads(done.stdout)
    assert document["decisions"]["waived"] == 1 and len(document["decisions"]["stale"]) == 1
    lead = next(f for f in document["findings"] if f["body"] == "lead")
    assert (lead["decision"], lead["decided_by"], lead["decision_note"]) == \
        ("wontfix", "Ana", "a test body")


def test_a_decided_new_finding_does_not_stop_the_pipeline(runs: dict[str, Path],
                                                          tmp_path: Path) -> None:
    decisions = tmp_path / "team.toml"
    decisions.write_text(dumps("x", [Decision("finding", "denser-than-iron", "lead2",
                                              "confirmed")]))
    done = bodycensus("check", str(runs["planted"]), "--baseline", str(runs["old"]),
                      "--fail-on-new", "impossible", "--decisions", str(decisions))
    assert done.returncode == 0, done.stderr


@pytest.mark.parametrize(("args", "words"), [
    (("--fail-on-new", "impossible"), "--fail-on-new needs --baseline"),
    (("--baseline", "nowhere.csv"), "no such file"),
    (("--decisions", "nowhere.toml"), "no such file"),
])
def test_gate_mistakes_exit_2_in_one_line(runs: dict[str, Path], args: tuple[str, ...],
                                          words: str) -> None:
    done = bodycensus("check", str(runs["old"]), *args)
    assert done.returncode == 2 and words in done.stderr
    assert len(done.stderr.strip().splitlines()) == 1


def test_a_broken_decisions_file_exits_2_naming_the_table(runs: dict[str, Path],
                                                          tmp_path: Path) -> None:
    bad = tmp_path / "bad.toml"
    bad.write_text("format = 1\n[[label]]\nrule = 'r'\nlabel = 'l'\nstatus = 'maybe'\n")
    done = bodycensus("check", str(runs["old"]), "--decisions", str(bad))
    assert done.returncode == 2
    assert "[[label]] number 1" in done.stderr and "status 'maybe'" in done.stderr


def test_compare_prints_the_table_and_json(runs: dict[str, Path]) -> None:
    table = bodycensus("compare", str(runs["old"]), str(runs["planted"]))
    assert table.returncode == 0, table.stderr
    assert "Bodies (matched by id): added 1, removed 0, changed 0, unchanged 3" in table.stdout
    assert "Findings (matched by body and rule): new " in table.stdout
    document = json.loads(bodycensus("compare", str(runs["old"]), str(runs["planted"]),
                                     "--format", "json").stdout)
    assert set(document) >= {"old", "new", "bodies", "findings", "shifts", "artefacts"}
    assert document["bodies"]["examples"]["added"] == ["lead2"]
    assert bodycensus("compare", str(runs["old"]), "missing.csv").returncode == 2
