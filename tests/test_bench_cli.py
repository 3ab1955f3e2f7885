"""``bodycensus bench``: every stage runs in its own process on a generated catalogue, and the
table of seconds, peak memory and ratios against the plain polars baselines is printed. Only the
shape is checked here: speed figures belong to the command, not to a unit test."""

from __future__ import annotations

from pathlib import Path

import pytest

from bodycensus.cli.bench import run_bench

STAGES = ["baseline read+write", "ingest", "baseline pass", "derive+rules", "rules only",
          "artefacts"]


def test_bench_prints_every_stage_and_the_ratios(tmp_path: Path,
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    assert run_bench(300, seed=3, workdir=tmp_path) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0].startswith("bench: 300 bodies") and lines[0].endswith("seed 3")
    assert lines[1].split() == ["stage", "seconds", "peak", "MiB", "bodies/s"]
    rows = {line[:22].strip(): line[22:].split() for line in lines[2:2 + len(STAGES)]}
    assert list(rows) == STAGES
    for name, (seconds, mib, _rate) in rows.items():
        assert float(seconds) >= 0 and float(mib) > 10, name  # a process with polars loaded
    ratios = [line for line in lines if line.startswith("ratio ")]
    assert len(ratios) == 4 and all(float(line.split()[-1]) > 0 for line in ratios)
    assert list(tmp_path.iterdir()) == []  # the scratch catalogue is removed
