"""``bodycensus compare OLD NEW``: what changed between two runs of a generator.

OLD and NEW are catalogue files (checked here first, with the same options) or folders kept by
``check --keep``. Prints the comparison of ``engines.compare`` as a table or as JSON.
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from bodycensus.cli.check import Commands, check_options
from bodycensus.cli.gate import baseline_run
from bodycensus.engines.compare import Comparison, compare_runs
from bodycensus.engines.local import check_file
from bodycensus.errors import BadInput
from bodycensus.input.hosts import HOST_LABEL
from bodycensus.science.shift import FDR

GROUPS_SHOWN = 25  # rule x label rows in the table (all of them in JSON)
SHIFTS_SHOWN = 25  # label x field rows: every reported shift, then the closest others


def add_compare_parser(commands: Commands) -> None:
    """Register ``compare`` and its options."""
    compare = commands.add_parser(
        "compare", help="compare two runs: bodies, findings, distributions, artefacts",
        description="Compare two catalogues (files, or folders kept by check --keep): bodies "
                    "added, removed and changed by id; findings new, fixed and unchanged by "
                    "rule and label; a two-sample shift test per label and field; artefacts "
                    "that appeared or vanished.")
    compare.add_argument("old", type=Path, help="the earlier run (file or kept folder)")
    compare.add_argument("new", type=Path, help="the later run (file or kept folder)")
    compare.add_argument("--format", choices=("table", "json"), default="table")
    compare.add_argument("--fdr", type=float, default=FDR,
                         help=f"false-discovery rate of the reported shifts (default {FDR})")
    for name, metavar, what in (("--map", "FIELD=COLUMN", "read FIELD from COLUMN"),
                                ("--unit", "FIELD=UNIT", "FIELD is given in UNIT"),
                                ("--family", "LABEL=FAMILY", "treat LABEL as FAMILY")):
        compare.add_argument(name, action="append", default=[], metavar=metavar,
                             help=f"{what} in both files (repeatable)")
    compare.set_defaults(no_artefacts=False, host_columns=[], host_unit=[],
                         host_label=HOST_LABEL, null=[])


def run_compare(args: argparse.Namespace) -> int:
    """Run ``compare``; 0, or 2 on bad input (raised to the command line's edge)."""
    options = check_options(args)
    for path in (args.old, args.new):
        if not path.exists():
            raise FileNotFoundError(2, "no such file", str(path))
    if not 0 < args.fdr < 1:
        raise BadInput(f"--fdr {args.fdr} must lie between 0 and 1, e.g. 0.05")
    with tempfile.TemporaryDirectory(prefix="bodycensus-compare-") as scratch:
        folders = [baseline_run(path, Path(scratch) / side,
                                lambda source, dest: check_file(source, dest, options))
                   for path, side in ((args.old, "old"), (args.new, "new"))]
        result = compare_runs(folders[0], folders[1], (args.old.name, args.new.name), args.fdr)
    if args.format == "json":
        sys.stdout.write(json.dumps(result, indent=1) + "\n")
    else:
        sys.stdout.write(compare_table(result))
    return 0


def _row(cells: Sequence[Any], widths: Sequence[int]) -> str:
    """Cells padded to widths: a negative width right-aligns (numbers), a positive one left."""
    out = []
    for cell, width in zip(cells, widths, strict=True):
        text = f"{cell:,}" if isinstance(cell, int) else str(cell)
        out.append(text.rjust(-width) if width < 0 else text.ljust(width))
    return "  " + "  ".join(out).rstrip()


def _table(head: Sequence[str], rows: Iterable[Sequence[Any]], widths: Sequence[int]
           ) -> list[str]:
    """A header and rows in columns of ``widths`` (negative: right-aligned)."""
    return [_row(head, widths), *[_row(r, widths) for r in rows]]


def _bodies(result: Comparison) -> list[str]:
    b = result["bodies"]
    lines = [f"Bodies (matched by id): added {b['added']:,}, removed {b['removed']:,}, "
             f"changed {b['changed']:,}, unchanged {b['unchanged']:,}"]
    if b["changed_fields"]:
        lines.append("  changed fields: " + ", ".join(
            f"{f} {n:,}" for f, n in sorted(b["changed_fields"].items(), key=lambda i: -i[1])))
    for kind, ids in b["examples"].items():
        if ids:
            lines.append(f"  {kind}, e.g.: {', '.join(ids)}")
    return lines


def _findings(result: Comparison) -> list[str]:
    f = result["findings"]
    lines = ["", f"Findings (matched by body and rule): new {f['new']:,}, fixed {f['fixed']:,}, "
                 f"unchanged {f['unchanged']:,}"]
    lines += _table(("severity", "new", "fixed", "unchanged"),
                    [(r["severity"], r["new"], r["fixed"], r["unchanged"])
                     for r in f["by_severity"]], (10, -7, -7, -9))
    lines.append("")
    groups = f["by_group"]
    lines += _table(("rule", "label", "severity", "new", "fixed", "unchanged"),
                    [(g["rule"], g["label"] or "(none)", g["severity"], g["new"], g["fixed"],
                      g["unchanged"]) for g in groups[:GROUPS_SHOWN]], (24, 20, 10, -6, -6, -9))
    if len(groups) > GROUPS_SHOWN:
        lines.append(f"  ... {len(groups) - GROUPS_SHOWN} more rule x label groups "
                     "(--format json lists all)")
    return lines


def _shifts(result: Comparison) -> list[str]:
    shifts = result["shifts"]
    reported = sum(s["shifted"] for s in shifts)
    lines = ["", f"Distribution shifts: {reported} of {len(shifts)} label x field tests at "
                 f"q < {result['fdr']} (two-sample Kolmogorov-Smirnov, Benjamini-Hochberg; "
                 f"one value per system; effect = shift in the bodies' pooled SDs; at most "
                 f"{result['sample_cap']:,} systems per label and run)"]
    shown = [s for s in shifts if s["shifted"]] or shifts[:5]
    lines += _table(("label", "field", "scale", "sys old", "sys new", "D", "p", "q", "effect",
                     ""),
                    [(s["label"], s["field"], s["scale"], s["units_old"], s["units_new"],
                      f"{s['statistic']:.3f}", f"{s['p_value']:.2g}", f"{s['q_value']:.2g}",
                      f"{s['effect']:.2f}", "SHIFTED" if s["shifted"] else "")
                     for s in shown[:SHIFTS_SHOWN]], (20, 16, 6, -7, -7, -6, -8, -8, -6, 7))
    if not reported:
        lines.append("  no shift reported; the closest tests are shown")
    return lines


def _artefacts(result: Comparison) -> list[str]:
    a = result["artefacts"]
    lines = ["", f"Artefacts: appeared {len(a['appeared'])}, vanished {len(a['vanished'])}, "
                 f"persisted {a['persisted']}"]
    for kind in ("appeared", "vanished"):
        lines += [f"  {kind}: {x['kind']} in {x['scope']} '{x['label']}' {x['field']}: "
                  f"{x['evidence']}" for x in a[kind]]
    return lines


def compare_table(result: Comparison) -> str:
    """The comparison as the readable text the command prints."""
    old, new = result["old"], result["new"]
    head = (f"compare {old['name']} ({old['bodies']:,} bodies, {old['findings']:,} findings) -> "
            f"{new['name']} ({new['bodies']:,} bodies, {new['findings']:,} findings) in "
            f"{result['seconds']:.1f} s")
    lines = [head, "", *_bodies(result), *_findings(result), *_shifts(result),
             *_artefacts(result)]
    return "\n".join(lines) + "\n"
