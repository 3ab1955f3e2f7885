"""The command line: ``bodycensus serve | check | compare | demo | bench``.

Each command is a thin shell over the functions the dashboard calls; domain errors become a
one-line message and exit code 2 here, at the edge, and nowhere else.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path

from bodycensus import __version__
from bodycensus.cli.bench import add_bench_parser, run_bench_command
from bodycensus.cli.check import Commands, add_check_parser, run_check
from bodycensus.cli.compare import add_compare_parser, run_compare
from bodycensus.errors import BodycensusError
from bodycensus.input.readers import compression_hint

BAD_INPUT = 2
_INPUT_ERRORS = (BodycensusError, FileNotFoundError, IsADirectoryError, PermissionError)


def _add_serve(commands: Commands) -> None:
    serve = commands.add_parser("serve", help="start the dashboard (local web server)",
                                description="Start the dashboard on this machine.")
    serve.add_argument("--host", default="127.0.0.1",
                       help="address to listen on (default 127.0.0.1; any other needs --token)")
    serve.add_argument("--port", type=int, default=8000, help="port (default 8000)")
    serve.add_argument("--data-dir", type=Path, default=None,
                       help="where catalogues and saved views live (default $BODYCENSUS_DATA, "
                            "else ~/.local/share/bodycensus)")
    serve.add_argument("--demo", action="store_true",
                       help="load the bundled demo catalogue so a first look needs no file")
    serve.add_argument("--add-run", action="append", default=[], type=Path, metavar="DIR",
                       help="also show the run folder DIR (bodycensus check --out DIR), e.g. "
                            "one a Dask cluster wrote (repeatable)")
    serve.add_argument("--token", default=None,
                       help="access token required on every request (or BODYCENSUS_TOKEN)")
    serve.add_argument("--allow-host", action="append", default=[], metavar="NAME",
                       help="also answer requests addressed to NAME (repeatable); without a "
                            "token only loopback names are answered, against DNS rebinding")
    limits = serve.add_argument_group("upload limits")
    limits.add_argument("--max-upload-mb", type=int, default=None,
                        help="largest upload in MiB, as sent (default 4096)")
    limits.add_argument("--max-decompressed-mb", type=int, default=None,
                        help=f"largest {compression_hint()} file once decompressed, in MiB "
                             "(default 16384)")
    limits.add_argument("--max-rows", type=int, default=None,
                        help="most data rows in one catalogue (default 50000000)")
    limits.add_argument("--max-columns", type=int, default=None,
                        help="most columns in one catalogue (default 2000)")


def _add_demo(commands: Commands) -> None:
    demo = commands.add_parser("demo", help="write the invented demo catalogue",
                               description="Write the invented demo catalogue with planted "
                                           "defects and a ground-truth file beside it.")
    demo.add_argument("--bodies", type=int, default=20_000, help="number of bodies (default 20000)")
    demo.add_argument("--seed", type=int, default=7, help="random seed (default 7)")
    demo.add_argument("--out", type=Path, required=True,
                      help="output file; .csv, .csv.gz, .parquet or .ndjson")
    demo.add_argument("--giant-mass-factor", type=float, default=1.0, metavar="F",
                      help="gas giants' median mass times F (default 1): another generator "
                           "setting, for bodycensus compare")
    demo.add_argument("--spike-share", type=float, default=None, metavar="S",
                      help="share of ocean worlds given one default mass (default 0.04; 0 "
                           "removes that planted spike)")
    demo.add_argument("--score", action="store_true",
                      help="then check it and print recall per planted defect and the rate of "
                           "clean bodies called impossible")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser for every command."""
    parser = argparse.ArgumentParser(
        prog="bodycensus",
        description="Find the bodies that physics rules out in catalogues of planets, moons "
                    "and stars.")
    parser.add_argument("--version", action="version", version=f"bodycensus {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    _add_serve(commands)
    add_check_parser(commands)
    add_compare_parser(commands)
    _add_demo(commands)
    add_bench_parser(commands)
    return parser


def _serve(args: argparse.Namespace) -> int:
    from bodycensus.dashboard.app import serve
    from bodycensus.dashboard.settings import MIB, Settings

    limits = {"max_upload_bytes": args.max_upload_mb and args.max_upload_mb * MIB,
              "max_decompressed_bytes": args.max_decompressed_mb and args.max_decompressed_mb * MIB,
              "max_rows": args.max_rows, "max_columns": args.max_columns}
    settings = Settings.from_cli(
        host=args.host, port=args.port, data_dir=args.data_dir, demo=args.demo,
        token=args.token, allowed_hosts=tuple(args.allow_host),
        **{k: v for k, v in limits.items() if v is not None})
    if args.add_run:
        from bodycensus.storage.store import Store

        store = Store(settings.data_dir)
        for folder in args.add_run:
            added = store.add_run(folder)
            print(f"bodycensus serve: {folder} shown as catalogue {added.id} ({added.name})",
                  file=sys.stderr)
    serve(settings)
    return 0


def _demo(args: argparse.Namespace) -> int:
    from bodycensus.demo import write_demo
    from bodycensus.demo.population import GeneratorSettings

    settings = GeneratorSettings(giant_mass_factor=args.giant_mass_factor)
    if args.spike_share is not None:
        settings = GeneratorSettings(args.giant_mass_factor, args.spike_share)
    catalogue, truth = write_demo(args.out, n_bodies=args.bodies, seed=args.seed,
                                  settings=settings)
    print(f"wrote {catalogue} and {truth}")
    if args.score:
        print(score_demo(catalogue, truth), end="")
    return 0


def score_demo(catalogue: Path, truth: Path) -> str:
    """Check a demo catalogue and score it against its truth file."""
    import tempfile

    import polars as pl

    from bodycensus.demo.scoring import score, score_text
    from bodycensus.engines.local import check_file
    from bodycensus.storage.runs import scan_bodies

    with tempfile.TemporaryDirectory(prefix="bodycensus-score-") as workdir:
        result = check_file(catalogue, Path(workdir))
        ids = scan_bodies(Path(workdir)).select("id").collect()["id"]
        truth_table = pl.read_csv(truth, infer_schema_length=0).with_columns(
            pl.col("at").cast(pl.Float64, strict=False))
        return score_text(score(result.findings, result.artefacts, truth_table, ids,
                                result.families))


def main(argv: Sequence[str] | None = None) -> int:
    """Run one command; the exit code is 0, 1 (findings at --fail-on), or 2 (bad input)."""
    args = build_parser().parse_args(argv)
    handlers = {"serve": _serve, "check": run_check, "compare": run_compare, "demo": _demo,
                "bench": run_bench_command}
    try:
        return handlers[args.command](args)
    except _INPUT_ERRORS as error:
        print(f"bodycensus {args.command}: {_one_line(error)}", file=sys.stderr)
        return BAD_INPUT
    except KeyboardInterrupt:
        print("bodycensus: interrupted", file=sys.stderr)
        return 130


def _one_line(error: BaseException) -> str:
    """The error's message on one line."""
    text = str(error) or error.__class__.__name__
    if isinstance(error, (FileNotFoundError, IsADirectoryError, PermissionError)):
        text = f"{error.strerror or 'cannot open'}: {error.filename}"
    return " ".join(text.split())
