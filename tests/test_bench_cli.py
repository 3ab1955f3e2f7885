"""``bodycensus bench``, small: two demo sizes, every process measured, the pandas reference's
findings compared with check's, and a served dashboard timed for a moment with 1 and 16 clients.
Only the table's shape and that each part ran are checked here (no timing thresholds): speed
figures belong to the command, not to a unit test."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from bodycensus.bench import jobs
from bodycensus.bench.table import CELL, LABEL, ROWS

SIZES = (5_000, 20_000)
KINDS = ["overview", "findings", "histogram", "mass-radius", "body", "system", "systems",
         "mixed"]


def _number(text: str) -> float:
    return float(text.replace(",", ""))


def test_bench_prints_one_table_with_every_process_ratio_and_latency(tmp_path: Path) -> None:
    saved = tmp_path / "bench.json"
    done = subprocess.run(
        [sys.executable, "-m", "bodycensus", "bench", "--bodies", *map(str, SIZES),
         "--seconds", "0.25", "--workdir", str(tmp_path), "--out", str(saved)],
        capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    lines = done.stdout.splitlines()
    assert lines[0].startswith("bodycensus bench, ") and "polars" in lines[0]
    assert lines[3].split() == ["5,000", "bodies", "20,000", "bodies", "4x", "bodies:", "s,",
                                "MiB"]
    reference = jobs.pandas_available()
    for key, name in ROWS:
        row = next(line for line in lines if line.startswith(name))
        cells = row[len(name):].split()
        if key == "pandas" and reference is not None:
            assert cells == ["not", "run", "not", "run"], row
            continue
        if key == "check_out":  # the run folder served: the largest size only
            assert cells[0] == "-" and len(cells) == 3, row
            cells = ["1", "31", *cells[1:], "1,", "1"]
        seconds = [_number(cells[0]), _number(cells[2])]
        mib = [_number(cells[1]), _number(cells[3])]
        assert all(s > 0 for s in seconds) and all(m > 30 for m in mib), row  # polars loaded
        growth = [float(x.rstrip(",")) for x in cells[4:6]]
        assert len(growth) == 2 and all(g > 0 for g in growth), row
    ratios = {line.split(",")[0].strip(): line for line in lines if line.startswith("  ")}
    for name in ("check / floor A", "check / floor B"):
        cells = ratios[name][LABEL:LABEL + CELL * len(SIZES)].split()
        assert len(cells) == len(SIZES) and all(float(x) > 0 for x in cells), ratios[name]
    findings = ratios["findings"]
    if reference is None:  # the identical-findings check ran on every size
        assert findings.count("identical (") == len(SIZES), findings
    else:
        assert f"pandas reference of the rules at 5,000: {reference}" in done.stdout
    assert "DIFFERENT" not in done.stdout
    start = next(i for i, line in enumerate(lines) if line.startswith("dashboard latency on "))
    assert lines[start].startswith("dashboard latency on 20,000 bodies")
    assert lines[start + 1].split() == ["request", "first", "1", "client", "16", "clients"]
    table = {line.split()[0]: line for line in lines[start + 2:start + 2 + len(KINDS)]}
    assert list(table) == KINDS
    assert "errors" not in "".join(table.values())
    results = json.loads(saved.read_text(encoding="utf-8"))
    assert [s["bodies"] for s in results["sizes"]] == list(SIZES)
    phases = results["latency"]["phases"]
    assert {(p["kind"], p["clients"]) for p in phases} == {(k, n) for k in KINDS for n in (1, 16)}
    assert all(p["requests"] > 0 and p["errors"] == 0 for p in phases)
    mixed = next(p for p in phases if p["kind"] == "mixed" and p["clients"] == 16)
    assert sum(f["requests"] for f in mixed["by_kind"].values()) == mixed["requests"]
    assert results["latency"]["server_peak_mib"] > 30
    assert list(tmp_path.iterdir()) == [saved]  # the scratch catalogues and runs are removed
