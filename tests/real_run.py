"""Check the issue-12 catalogues with one checkout of bodycensus and count findings by rule.

    python tests/real_run.py OUT [--server PATH]   # PATH: a checkout's server/ (default: installed)

Writes OUT/<catalogue>/ (the engine's files, kept with check --keep) and prints, per catalogue,
counts by severity and rule and the share of bodies with each severity.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
from pathlib import Path

import polars as pl

sys.path.insert(0, str(Path(__file__).resolve().parent))  # tests/, for real_catalogues
from real_catalogues import ARCHIVE_TABLES, CATALOGUES, without_uncertainties  # noqa: E402


def check(source: Path, options: list[str], keep: Path, server: Path | None) -> None:
    env = dict(os.environ)
    if server is not None:
        env["PYTHONPATH"] = str(server)
    done = subprocess.run([sys.executable, "-m", "bodycensus", "check", str(source), *options,
                           "--keep", str(keep), "--format", "table", "--limit", "0",
                           "--no-artefacts", "--quiet"],
                          env=env, capture_output=True, text=True)
    if done.returncode not in (0, 1):
        raise SystemExit(done.stderr)
    print(done.stdout.split("\n\n")[0])


def counts(keep: Path) -> pl.DataFrame:
    findings = pl.read_parquet(keep / "findings.parquet")
    return findings.group_by("severity", "rule").agg(pl.len().alias("findings"),
                                                     pl.col("body").n_unique().alias("bodies"))


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("out", type=Path)
    parser.add_argument("--server", type=Path, default=None)
    parser.add_argument("--before", action="store_true",
                        help="a bodycensus without uncertainty fields (main's rules)")
    args = parser.parse_args()
    tables = CATALOGUES if args.before else {**CATALOGUES, **ARCHIVE_TABLES}
    for name, prepare in tables.items():
        work = args.out / name
        work.mkdir(parents=True, exist_ok=True)
        source, options = prepare(args.out)
        if args.before:
            options = without_uncertainties(options)
        check(source, options, work, args.server)
        with pl.Config(tbl_rows=60):
            print(counts(work).sort("severity", "findings", descending=[False, True]))


if __name__ == "__main__":
    main()
