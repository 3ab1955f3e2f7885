"""Do two checked run folders give the same answers? Findings (every column), coverage,
artefacts, and every derived column of every body.

Used by hand to compare the partitioned engine with main's whole-table engine on big catalogues
(the suite's ``test_partition.py`` compares partitionings on small ones):

    PYTHONPATH=/path/to/main/server python -c "...check_file(FILE, REF)..."
    python tests/same_answers.py REF NEW        # prints SAME, or raises where they differ

Main gave a body without a parent an arbitrary rootless "inner sibling"; the partitioned engine
gives none, so those four columns are compared only for bodies with a parent.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import polars as pl
from polars.testing import assert_frame_equal

from bodycensus.engines.partition import stored_columns
from bodycensus.storage.runs import scan_bodies

_INNER = ("inner_id", "inner_a", "inner_mass", "inner_apoapsis")


def same_answers(reference: Path, candidate: Path) -> None:
    """Raise AssertionError where the two runs differ."""
    key = ["rule", "_row", "body"]
    for name in ("findings.parquet", "coverage.parquet", "artefacts.parquet"):
        ref, new = pl.read_parquet(reference / name), pl.read_parquet(candidate / name)
        if name == "findings.parquet":
            ref, new = ref.sort(key), new.sort(key)
            print(f"findings: {ref.height:,} and {new.height:,}")
        assert_frame_equal(ref, new)
    orbiting = [pl.when(pl.col("parent").is_not_null()).then(pl.col(c)).alias(c)
                for c in _INNER]
    ref_bodies = scan_bodies(reference).with_columns(orbiting).sort("_row").collect()
    new_bodies = scan_bodies(candidate).sort("_row").collect()
    # a run stores the working columns only the rules read no more (engines.partition)
    assert set(new_bodies.columns) == set(stored_columns(ref_bodies.columns))
    assert_frame_equal(ref_bodies.select(new_bodies.columns), new_bodies)
    print(f"bodies: {ref_bodies.height:,} rows, {ref_bodies.width} columns")


def main() -> None:
    """Command line: two run folders."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("reference", type=Path)
    parser.add_argument("candidate", type=Path)
    args = parser.parse_args()
    same_answers(args.reference, args.candidate)
    print("SAME")


if __name__ == "__main__":
    main()
