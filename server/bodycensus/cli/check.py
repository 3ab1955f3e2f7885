"""``bodycensus check``: the headless gate for a content pipeline.

Prints the findings as JSON (``{"catalogue", "summary", "findings", "artefacts"}``), CSV or a
readable table; exits 1 when a finding at or above ``--fail-on`` exists, leaving out findings a
decisions file covers, or when a finding is new against a baseline run (``cli.gate``).
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import TextIO, TypeAlias

import polars as pl

from bodycensus.cli.gate import (
    Gate,
    add_gate_arguments,
    apply_gate,
    check_gate_arguments,
    exit_code,
    gate_json,
    gate_lines,
)
from bodycensus.cli.run_folder import write_run_folder
from bodycensus.engines.local import CheckOptions, CheckResult, check_dataset
from bodycensus.errors import BadInput
from bodycensus.input.dataset import dataset_files, describe
from bodycensus.input.formats import accepted
from bodycensus.input.hosts import HOST_LABEL, HostColumns
from bodycensus.input.ingest import IngestRecord
from bodycensus.input.schema import parse_assignment
from bodycensus.progress import Progress
from bodycensus.science.families import parse_family_override
from bodycensus.science.severity import SEVERITIES, rank_expr
from bodycensus.storage.csvsafe import neutralise_formulas

PROGRESS_FILE_BYTES = 20 * 2**20  # files above this report progress on stderr by default
STAGE_NOTES = {  # what the Dask engine's partition stages mean, said once in the progress lines
    "systems": "the files are split by system already: no shuffle",
    "shuffle": "a system spans files: Dask shuffles the bodies by system first",
}
Commands: TypeAlias = "argparse._SubParsersAction[argparse.ArgumentParser]"  # the subcommands


class CatalogueInfo(IngestRecord):
    """The JSON document's ``catalogue``: the file, how it was read, the family of each label."""

    file: str
    name: str
    label_families: dict[str, str]


def add_check_parser(commands: Commands) -> None:
    """Register ``check`` and its options."""
    check = commands.add_parser(
        "check", help="check a catalogue file and print the findings",
        description=f"Check a catalogue ({accepted()}; one file, a folder of files or a glob) "
                    "and print what physics rules out or makes suspicious.")
    check.add_argument("file", type=Path, metavar="DATASET",
                       help="the catalogue: a file, a folder of files or a quoted glob of them")
    check.add_argument("--map", action="append", default=[], metavar="FIELD=COLUMN",
                       help="read FIELD from COLUMN (repeatable), e.g. --map radius=r_eq")
    check.add_argument("--unit", action="append", default=[], metavar="FIELD=UNIT",
                       help="FIELD is given in UNIT (repeatable), e.g. --unit mass=earth_mass")
    check.add_argument("--family", action="append", default=[], metavar="LABEL=FAMILY",
                       help="treat LABEL as FAMILY (repeatable), e.g. --family 'lava world=rock'")
    hosts = check.add_argument_group(
        "one row per planet", "build a row per host star from columns of each planet's row")
    hosts.add_argument("--host-columns", action="append", default=[],
                       metavar="FIELD=COLUMN[,FIELD=COLUMN...]",
                       help="the host's FIELD is in COLUMN (repeatable), e.g. "
                            "--host-columns name=star_name,mass=star_mass")
    hosts.add_argument("--host-unit", action="append", default=[], metavar="FIELD=UNIT",
                       help="the host's FIELD is given in UNIT, e.g. --host-unit mass=solar_mass")
    hosts.add_argument("--host-label", default=HOST_LABEL, metavar="TEXT",
                       help=f"label of the host rows (default '{HOST_LABEL}')")
    check.add_argument("--null", action="append", default=[], metavar="VALUE",
                       help="cells reading VALUE are empty (repeatable), e.g. --null -99")
    check.add_argument("--format", choices=("json", "csv", "table"), default="table",
                       help="output format (default table)")
    check.add_argument("--fail-on", choices=SEVERITIES, default=None,
                       help="exit 1 when a finding at or above this severity exists")
    check.add_argument("--limit", type=int, default=40,
                       help="findings shown by --format table (default 40; all in json/csv)")
    check.add_argument("--keep", type=Path, default=None,
                       help="keep the run's Parquet files (bodies, findings, ...) in this folder")
    check.add_argument("--no-artefacts", action="store_true",
                       help="skip the distribution-artefact detector")
    engine = check.add_argument_group("engine")
    engine.add_argument("--engine", choices=("local", "dask"), default="local",
                        help="local (this process, default) or dask (a Dask cluster; needs "
                             "pip install 'bodycensus[distributed]')")
    engine.add_argument("--scheduler", default=None, metavar="tcp://HOST:PORT",
                        help="the Dask scheduler to use (default: a local cluster of two worker "
                             "processes on 127.0.0.1)")
    engine.add_argument("--out", type=Path, default=None, metavar="DIR",
                        help="write the run's folder (findings, aggregates, manifest) here; "
                             "`bodycensus serve --add-run DIR` shows it")
    add_gate_arguments(check)
    noise = check.add_mutually_exclusive_group()
    noise.add_argument("--progress", action="store_true", help="always report progress on stderr")
    noise.add_argument("--quiet", action="store_true", help="never report progress")


def check_options(args: argparse.Namespace) -> CheckOptions:
    """The engine options the command line gives (shared by check and compare)."""
    return CheckOptions(
        map_overrides=dict(parse_assignment(text) for text in args.map),
        unit_overrides=dict(parse_assignment(text) for text in args.unit),
        family_overrides=dict(parse_family_override(text) for text in args.family),
        artefacts=not args.no_artefacts,
        hosts=HostColumns(
            dict(parse_assignment(part) for text in args.host_columns
                 for part in text.split(",") if part.strip()),
            dict(parse_assignment(text) for text in args.host_unit),
            args.host_label),
        nulls=tuple(args.null),
    )


class _ProgressPrinter:
    """Writes ``stage, rows, elapsed`` lines to stderr."""

    def __init__(self, stream: TextIO) -> None:
        self.stream, self.started, self.rows = stream, time.monotonic(), 0

    def __call__(self, stage: str, fraction: float, rows: int | None = None) -> None:
        self.rows = rows if rows is not None else self.rows
        elapsed = time.monotonic() - self.started
        note = f"  ({STAGE_NOTES[stage]})" if stage in STAGE_NOTES else ""
        print(f"bodycensus check: {stage:<9} rows {self.rows:>12,}  {elapsed:7.1f} s{note}",
              file=self.stream, flush=True)


def run_check(args: argparse.Namespace) -> int:
    """Run ``check``; returns the exit code."""
    options = check_options(args)
    files = dataset_files(args.file)
    check_gate_arguments(args)
    if args.scheduler is not None and args.engine != "dask":
        raise BadInput("--scheduler needs --engine dask")
    wants_progress = args.progress or (
        not args.quiet and sum(f.stat().st_size for f in files) > PROGRESS_FILE_BYTES)
    progress = _ProgressPrinter(sys.stderr) if wants_progress else None
    with tempfile.TemporaryDirectory(prefix="bodycensus-check-") as scratch:
        workdir = args.out or args.keep or Path(scratch) / "run"
        result = _engine(args, options, progress)(args.file, workdir)
        if args.out is not None:
            write_run_folder(result, args.out, describe(files), options)
        gate = apply_gate(result, args, Path(scratch) / "baseline",
                          lambda source, dest: check_dataset(source, dest, options, progress))
        _print(result, gate, args, sys.stdout)
        for line in gate_lines(gate, args.fail_on_new):
            print(f"bodycensus check: {line}", file=sys.stderr)
    return exit_code(gate, args.fail_on)


def _engine(args: argparse.Namespace, options: CheckOptions, progress: Progress | None
            ) -> Callable[[Path, Path], CheckResult]:
    """The chosen engine as ``run(dataset, workdir)``; Dask is imported only when chosen."""
    if args.engine == "local":
        return lambda dataset, workdir: check_dataset(dataset, workdir, options, progress)
    try:
        from bodycensus.engines.dask.run import check_on_dask
    except ImportError as err:
        raise BadInput(f"--engine dask needs Dask ({err.name} is not installed); "
                       "pip install 'bodycensus[distributed]'") from err
    return lambda dataset, workdir: check_on_dask(dataset, workdir, options, progress,
                                                  scheduler=args.scheduler)


def _sorted_findings(findings: pl.DataFrame) -> pl.DataFrame:
    return findings.sort(rank_expr(), pl.col("margin").abs(), pl.col("_row"),
                         descending=[False, True, False], nulls_last=True)


OUTPUT_ROWS = 20_000  # findings turned into JSON or CSV text at a time (``write_json_document``)


def _print(result: CheckResult, gate: Gate, args: argparse.Namespace, out: TextIO) -> None:
    findings = _sorted_findings(gate.findings)
    if args.format == "json":
        write_json_document(out, result, args.file, findings, gate_json(gate))
    elif args.format == "csv":
        for start in range(0, max(findings.height, 1), OUTPUT_ROWS):
            piece = neutralise_formulas(findings.slice(start, OUTPUT_ROWS).drop("_row"))
            out.write(piece.write_csv(include_header=start == 0))
    else:
        out.write(table_text(result, args.file, findings, args.limit))


def catalogue_info(result: CheckResult, source: Path) -> CatalogueInfo:
    """What was read and how: file, format, mapping, families (of a run from a file)."""
    if result.report is None:
        raise ValueError("catalogue_info needs a run from a file (check_file), not a table")
    return {"file": str(source), "name": _name(source), **result.report.to_json(),
            "label_families": result.families}


def _name(source: Path) -> str:
    """The catalogue's name in a report: the file's, or a dataset's folder and file count."""
    return source.name if source.is_file() else describe(dataset_files(source))


def write_json_document(out: TextIO, result: CheckResult, source: Path, findings: pl.DataFrame,
                        gate: dict[str, object] | None = None) -> None:
    """Write the headless contract's JSON document (with the gate's decisions and baseline
    counts) to ``out``, the findings a slice at a time: as one string, the text and its joined
    copies were held at once at the end of the run, where a 30M-body check peaked."""
    head = {"catalogue": catalogue_info(result, source),
            "summary": {**result.summary, "coverage": result.coverage.to_dicts()}, **(gate or {})}
    out.write(json.dumps(head, indent=1, default=str)[:-2] + ',\n "findings": [')
    rows = findings.drop("_row")
    for start in range(0, rows.height, OUTPUT_ROWS):
        text = rows.slice(start, OUTPUT_ROWS).write_json()  # '[{...},...]': the brackets dropped
        out.write(("," if start else "") + text[1:-1])
    out.write('],\n "artefacts": ' + result.artefacts.write_json() + "\n}\n")


def table_text(result: CheckResult, source: Path, findings: pl.DataFrame, limit: int) -> str:
    """A readable report: counts, the most serious findings, artefacts, rule coverage."""
    summary = result.summary
    lines = [(f"{_name(source)}: {summary['rows']:,} bodies, {summary['findings']:,} findings "
             f"on {summary['bodies_with_findings']:,} bodies, {summary['artefacts']} artefacts")]
    lines.append("  " + "  ".join(f"{sev} {n:,}" for sev, n in summary["by_severity"].items()))
    if summary["unmapped_labels"]:
        lines.append("  labels with no family (use --family LABEL=FAMILY): "
                     + ", ".join(summary["unmapped_labels"]))
    for note in (result.report.notes if result.report else []):
        lines.append(f"  note: {note}")
    if summary["bad_cells"]:
        lines.append("  unreadable cells: " + ", ".join(
            f"{col} {n:,}" for col, n in summary["bad_cells"].items()))
    lines.append("")
    shown = findings.head(limit)
    for row in shown.iter_rows(named=True):
        decided = f" [{row['decision']}]" if row.get("decision") else ""
        lines.append(f"{row['severity']:<10} {row['rule']:<24} {row['body']:<16} "
                     f"{row['message']}{decided}")
    if findings.height > limit:
        lines.append(f"... {findings.height - limit:,} more (use --format json or csv for all)")
    for row in result.artefacts.iter_rows(named=True):
        lines.append(f"artefact   {row['kind']:<8} {row['scope']} '{row['label']}' "
                     f"{row['field']}: {row['evidence']} (p={row['p_value']:.2g})")
    return "\n".join(lines) + "\n"
