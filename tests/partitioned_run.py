"""A checked run folder of a demo catalogue split into many small partitions, with some of the
storage layer's sizes (row groups) patched small, for tests of pruned reads."""

from __future__ import annotations

from pathlib import Path

import pytest

from bodycensus.cli.run_folder import write_run_folder
from bodycensus.demo import write_demo
from bodycensus.engines.local import CheckOptions, check_file
from bodycensus.storage import runs


def demo_run_folder(root: Path, bodies: int, sizes: dict[str, int]) -> Path:
    """Check a demo catalogue of ``bodies`` (seed 5) in partitions of 1,000 bodies into
    ``root/run``, with the ``storage.runs`` constants in ``sizes`` set for the run."""
    source, _ = write_demo(root / "demo.csv", n_bodies=bodies, seed=5)
    options = CheckOptions(partition_rows=1_000)
    run = root / "run"
    with pytest.MonkeyPatch.context() as patch:
        for name, value in sizes.items():
            patch.setattr(runs, name, value)
        write_run_folder(check_file(source, run, options), run, "demo.csv", options)
    return run
