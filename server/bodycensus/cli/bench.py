"""``bodycensus bench``: one table of speed and memory for demo catalogues of several sizes,
each figure against a baseline measured in the same run (``bodycensus.bench``)."""

from __future__ import annotations

import argparse
from pathlib import Path

from bodycensus.cli.check import Commands


def add_bench_parser(commands: Commands) -> None:
    """Register ``bench`` and its options."""
    bench = commands.add_parser(
        "bench", help="measure speed, memory and dashboard latency against baselines",
        description="Print one table for demo catalogues of each size: two plain polars "
                    "floors (scan_csv, cast, sink_parquet; read_csv, cast, write_parquet), "
                    "bodycensus check --format json --quiet and a plain pandas reference of the "
                    "rules (wall time and peak memory of each process; pandas' findings compared "
                    "with check's), then the dashboard's latency on the largest catalogue, "
                    "served from the run folder of a second check --out, and the ratios. "
                    "Progress goes to stderr, the table to stdout; the exit code is 1 when "
                    "pandas' findings differ from check's.")
    bench.add_argument("--bodies", type=int, nargs="+", default=[1_000_000, 10_000_000],
                       metavar="N", help="catalogue sizes (default 1000000 10000000); a demo "
                                         "catalogue is generated for each size no --catalogue has")
    bench.add_argument("--catalogue", type=Path, action="append", default=[], metavar="FILE",
                       help="a demo catalogue already on disk (bodycensus demo), measured at its "
                            "own number of rows instead of generating one (repeatable)")
    bench.add_argument("--clients", type=int, nargs="+", default=[1, 16], metavar="N",
                       help="concurrent dashboard clients, one latency phase each (default 1 16)")
    bench.add_argument("--seconds", type=float, default=10.0,
                       help="seconds of requests per kind of request and number of clients "
                            "(default 10)")
    bench.add_argument("--seed", type=int, default=5, help="seed of generated demos (default 5)")
    bench.add_argument("--pandas-max-bodies", type=int, default=None, metavar="N",
                       help="run the pandas reference only on catalogues of at most N bodies "
                            "(default: every size)")
    bench.add_argument("--no-latency", action="store_true",
                       help="skip serving the largest catalogue and timing the dashboard")
    bench.add_argument("--max-mib", type=float, default=16_384.0, metavar="MIB",
                       help="kill any measured process (or the server) whose resident memory "
                            "passes MIB, so the machine stays usable; the table says so "
                            "(default 16384)")
    bench.add_argument("--workdir", type=Path, default=None,
                       help="folder for scratch files, removed afterwards (default: system temp)")
    bench.add_argument("--out", type=Path, default=None, metavar="FILE.json",
                       help="also save every figure of the table as JSON")


def run_bench_command(args: argparse.Namespace) -> int:
    """``bodycensus bench`` with the parsed options."""
    from bodycensus.bench.run import BenchOptions, run_bench

    return run_bench(BenchOptions(
        bodies=tuple(args.bodies), catalogues=tuple(args.catalogue), clients=tuple(args.clients),
        seconds=args.seconds, seed=args.seed, workdir=args.workdir, out=args.out,
        pandas_max_bodies=args.pandas_max_bodies, latency=not args.no_latency,
        max_mib=args.max_mib))
