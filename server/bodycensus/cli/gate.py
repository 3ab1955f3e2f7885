"""The pipeline gate of ``bodycensus check``: decisions that waive findings (``--decisions``) and
a baseline run that tells new findings from known ones (``--baseline``, ``--fail-on-new``).

Exit codes stay those of ``check``: 1 when an undecided finding at or above ``--fail-on`` exists,
or when a finding at or above ``--fail-on-new`` is new against the baseline and undecided; 0
otherwise; 2 on bad input (an unreadable decisions file, a missing baseline).
"""

from __future__ import annotations

import argparse
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import polars as pl

from bodycensus.engines.compare import new_findings
from bodycensus.engines.local import CheckResult
from bodycensus.errors import BadInput
from bodycensus.science.severity import SEVERITIES, SEVERITY_RANK
from bodycensus.storage.decisions import Decision
from bodycensus.storage.decisions_file import loads
from bodycensus.storage.runs import is_run, scan_bodies, scan_findings
from bodycensus.storage.triage import stale, with_decisions

FOUND = 1
SHOWN_NEW = 20  # new findings listed on stderr


@dataclass
class Gate:
    """What the gate saw: the findings with their decisions, the waived, the stale, the new."""

    findings: pl.DataFrame
    decisions_file: Path | None = None
    decisions: tuple[Decision, ...] = ()
    stale: list[Decision] = field(default_factory=list)
    baseline: Path | None = None
    new: pl.DataFrame | None = None  # new, undecided findings at or above --fail-on-new

    @property
    def waived(self) -> int:
        """Findings a decision covers."""
        if self.decisions_file is None:
            return 0
        return int(self.findings["decision"].is_not_null().sum())

    def undecided(self) -> pl.DataFrame:
        """The findings no decision covers."""
        if "decision" not in self.findings.columns:
            return self.findings
        return self.findings.filter(pl.col("decision").is_null())


def add_gate_arguments(check: argparse.ArgumentParser) -> None:
    """``--decisions``, ``--baseline`` and ``--fail-on-new``."""
    check.add_argument("--decisions", type=Path, default=None, metavar="FILE",
                       help="a decisions file (TOML, exported from the Triage screen): decided "
                            "findings are left out of --fail-on and --fail-on-new")
    check.add_argument("--baseline", type=Path, default=None, metavar="OLD",
                       help="the previous run: a catalogue file or a folder kept by --keep")
    check.add_argument("--fail-on-new", choices=SEVERITIES, default=None, metavar="SEVERITY",
                       help="exit 1 when a finding at or above SEVERITY is new against "
                            "--baseline (matched by body id and rule)")


def check_gate_arguments(args: argparse.Namespace) -> None:
    """BadInput when the options do not fit together or a file is missing."""
    if args.fail_on_new and args.baseline is None:
        raise BadInput("--fail-on-new needs --baseline OLD (the previous run)")
    for path in (args.decisions, args.baseline):
        if path is not None and not path.exists():
            raise FileNotFoundError(2, "no such file", str(path))


def baseline_run(path: Path, workdir: Path, run: Callable[[Path, Path], CheckResult]) -> Path:
    """The folder of the baseline run: ``path`` itself when it is a kept run, else a fresh check
    of the file into ``workdir``."""
    if is_run(path):
        return path
    if path.is_dir():
        raise BadInput(f"{path} is a folder but not a kept run (no findings.parquet); give the "
                       "catalogue file or a folder written by check --keep")
    run(path, workdir)
    return workdir


def apply_gate(result: CheckResult, args: argparse.Namespace, workdir: Path,
               run: Callable[[Path, Path], CheckResult]) -> Gate:
    """Lay the decisions over the run's findings, find the stale ones and the new findings."""
    findings = result.findings
    gate = Gate(findings)
    bodies_dir = result.bodies if result.bodies.is_dir() else result.bodies.parent
    if args.decisions is not None:
        text = args.decisions.read_text(encoding="utf-8")
        gate.decisions = loads(text, str(args.decisions)).decisions
        gate.decisions_file = args.decisions
        gate.findings = with_decisions(findings.lazy(), gate.decisions,
                                       lambda: scan_bodies(bodies_dir)).collect()
        gate.stale = stale(findings.lazy(), gate.decisions, lambda: scan_bodies(bodies_dir))
    if args.baseline is not None:
        gate.baseline = args.baseline
        old = baseline_run(args.baseline, workdir, run)
        if args.fail_on_new:
            gate.new = new_findings(scan_findings(old), gate.undecided().lazy(),
                                    args.fail_on_new).collect()
    return gate


def exit_code(gate: Gate, fail_on: str | None) -> int:
    """1 when an undecided finding reaches ``fail_on`` or a new one reaches --fail-on-new."""
    if gate.new is not None and gate.new.height:
        return FOUND
    if fail_on is None:
        return 0
    ranks = [SEVERITY_RANK[s] for s in gate.undecided()["severity"].unique().to_list()]
    return FOUND if ranks and min(ranks) <= SEVERITY_RANK[fail_on] else 0


def _count(n: int, noun: str) -> str:
    """``1 finding``, ``2 findings``."""
    return f"{n:,} {noun}{'' if n == 1 else 's'}"


def gate_lines(gate: Gate, fail_on_new: str | None) -> list[str]:
    """What the gate says on stderr: waived findings, stale decisions, new findings."""
    lines = []
    if gate.decisions_file is not None:
        lines.append(f"{_count(gate.waived, 'finding')} waived by "
                     f"{_count(len(gate.decisions), 'decision')} in {gate.decisions_file}")
        lines += [f"stale decision (matches no finding): {d.describe()}" for d in gate.stale]
    if gate.new is not None:
        lines.append(f"{_count(gate.new.height, 'new undecided finding')} at or above "
                     f"{fail_on_new} against {gate.baseline}")
        lines += [f"new {row['severity']:<10} {row['rule']:<24} {row['body']}: {row['message']}"
                  for row in gate.new.head(SHOWN_NEW).iter_rows(named=True)]
        if gate.new.height > SHOWN_NEW:
            lines.append(f"... {gate.new.height - SHOWN_NEW:,} more new findings")
    return lines


def gate_json(gate: Gate) -> dict[str, object]:
    """The gate's part of check's JSON document."""
    out: dict[str, object] = {}
    if gate.decisions_file is not None:
        out["decisions"] = {"file": str(gate.decisions_file), "decisions": len(gate.decisions),
                            "waived": gate.waived,
                            "stale": [d.describe() for d in gate.stale]}
    if gate.baseline is not None:
        out["baseline"] = {"file": str(gate.baseline),
                           "new": None if gate.new is None else gate.new.height}
    return out
