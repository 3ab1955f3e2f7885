"""How often does the shift test cry wolf? Pairs of demo catalogues from the same generator
(different seeds, default settings) compared label by label and field by field, as
``bodycensus compare`` does; a pair with any reported shift is a false alarm.

``python tests/shift_false_alarms.py [--pairs 100] [--bodies 20000]`` prints the rate;
tests/test_compare.py checks one such pair in the suite; this script measures the rate.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import polars as pl

from bodycensus.demo import write_demo
from bodycensus.engines.shifts import compare_distributions
from bodycensus.input.ingest import ingest

FIRST_SEED = 1000


@dataclass(frozen=True)
class FalseAlarms:
    """Pairs compared, pairs with at least one reported shift, tests run and tests reported."""

    pairs: int
    alarmed_pairs: int
    tests: int
    reported: int
    seconds: float

    @property
    def rate(self) -> float:
        """Share of pairs with a false alarm (the family-wise false-alarm rate)."""
        return self.alarmed_pairs / self.pairs

    def text(self) -> str:
        return (f"{self.alarmed_pairs} of {self.pairs} same-generator pairs had a reported "
                f"shift (false-alarm rate {self.rate:.1%}); {self.reported} of {self.tests:,} "
                f"label x field tests reported; {self.seconds:.0f} s")


def _normalised(folder: Path, bodies: int, seed: int) -> pl.LazyFrame:
    """A demo catalogue of this seed, ingested into the normalised table."""
    source, _truth = write_demo(folder / f"demo-{seed}.csv", n_bodies=bodies, seed=seed)
    dest = folder / f"demo-{seed}.parquet"
    ingest(source, dest)
    return pl.scan_parquet(dest)


def measure(pairs: int = 100, bodies: int = 20_000) -> FalseAlarms:
    """Compare ``pairs`` pairs of same-generator demo catalogues."""
    started = time.monotonic()
    alarmed = tests = reported = 0
    for pair in range(pairs):
        with tempfile.TemporaryDirectory(prefix="bodycensus-alarms-") as scratch:
            seed = FIRST_SEED + 2 * pair
            old, new = (_normalised(Path(scratch), bodies, s) for s in (seed, seed + 1))
            shifts = compare_distributions(old, new)
        hits = sum(s["shifted"] for s in shifts)
        tests, reported, alarmed = tests + len(shifts), reported + hits, alarmed + (hits > 0)
    return FalseAlarms(pairs, alarmed, tests, reported, time.monotonic() - started)


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pairs", type=int, default=100)
    parser.add_argument("--bodies", type=int, default=20_000)
    options = parser.parse_args()
    print(measure(options.pairs, options.bodies).text())
