"""A catalogue bigger than the demo generator builds in memory: demo catalogues of several seeds
stacked into one CSV, each seed's ids, parents and systems prefixed so they stay distinct.

Used by hand for the flat-memory figure of issue 10 (30M bodies = three 10M demos):

    python tests/stack_demos.py OUT.csv --bodies 10000000 --seeds 5 6 7

Each seed's demo is written to a temporary CSV next to OUT, then streamed into OUT (polars
``scan_csv`` -> ``sink_csv``, every cell read as text), so memory follows one demo at a time.
"""

from __future__ import annotations

import argparse
import shutil
from pathlib import Path

import polars as pl

from bodycensus.demo import write_demo

_NAMES = ("id", "orbits", "system")  # the demo's columns that name a body or a system


def stack(out: Path, bodies: int, seeds: list[int]) -> None:
    """Write ``out``: the demos of ``seeds``, ``bodies`` each, ids prefixed 's{seed}-'."""
    with out.open("wb") as sink:
        for i, seed in enumerate(seeds):
            part = out.with_name(f"{out.stem}.seed{seed}.csv")
            write_demo(part, n_bodies=bodies, seed=seed)
            part.with_name(part.name.replace(".csv", ".truth.csv")).unlink(missing_ok=True)
            prefixed = out.with_name(f"{out.stem}.seed{seed}.prefixed.csv")
            frame = pl.scan_csv(part, infer_schema=False)
            frame.with_columns(pl.concat_str([pl.lit(f"s{seed}-"), pl.col(c)]).alias(c)
                               for c in _NAMES).sink_csv(prefixed, include_header=i == 0)
            part.unlink()
            with prefixed.open("rb") as source:
                shutil.copyfileobj(source, sink, 16 << 20)
            prefixed.unlink()
            print(f"seed {seed}: {bodies:,} bodies", flush=True)


def main() -> None:
    """Command line."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("out", type=Path)
    parser.add_argument("--bodies", type=int, default=10_000_000)
    parser.add_argument("--seeds", type=int, nargs="+", default=[5, 6, 7])
    args = parser.parse_args()
    stack(args.out, args.bodies, args.seeds)


if __name__ == "__main__":
    main()
