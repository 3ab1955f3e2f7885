"""Does ``bodycensus compare`` scale like ``bodycensus check``? Seconds and peak memory of
checking two demo runs and of comparing them, each in a fresh process, and their ratios.

``python tests/bench_compare.py --bodies 1000000`` generates two demo catalogues (seeds 1 and 2)
in a scratch folder; ``--files OLD NEW`` uses existing catalogue files instead. The check runs
without the artefact detector (the comparison does not need it). The baseline is the check of
the old run, in the same invocation on the same machine.
"""

from __future__ import annotations

import argparse
import multiprocessing
import tempfile
import time
from pathlib import Path

Timing = tuple[float, float]  # seconds, peak MiB


def _peak_mib() -> float:
    """This process's own peak resident memory (VmHWM)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def _job(name: str, args: tuple[str, ...], queue: multiprocessing.Queue[Timing]) -> None:
    from bodycensus.engines.compare import compare_runs
    from bodycensus.engines.local import CheckOptions, check_file

    started = time.perf_counter()
    if name == "check":
        check_file(Path(args[0]), Path(args[1]), CheckOptions(artefacts=False))
    else:
        compare_runs(Path(args[0]), Path(args[1]))
    queue.put((time.perf_counter() - started, _peak_mib()))


def _run(name: str, *args: str) -> Timing:
    context = multiprocessing.get_context("spawn")
    queue: multiprocessing.Queue[Timing] = context.Queue()
    child = context.Process(target=_job, args=(name, args, queue))
    child.start()
    child.join()
    if child.exitcode != 0:
        raise RuntimeError(f"{name} failed (exit code {child.exitcode})")
    return queue.get(timeout=5)


def bench(old: Path, new: Path, folder: Path) -> dict[str, Timing]:
    """Check both files into ``folder``, then compare the two runs."""
    results = {"check old": _run("check", str(old), str(folder / "old")),
               "check new": _run("check", str(new), str(folder / "new"))}
    results["compare"] = _run("compare", str(folder / "old"), str(folder / "new"))
    return results


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--bodies", type=int, default=1_000_000)
    parser.add_argument("--files", type=Path, nargs=2, metavar=("OLD", "NEW"))
    options = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="bodycensus-bench-compare-") as scratch:
        folder = Path(scratch)
        if options.files:
            old, new = options.files
        else:
            from bodycensus.demo import write_demo

            old = write_demo(folder / "old.parquet", options.bodies, seed=1)[0]
            new = write_demo(folder / "new.parquet", options.bodies, seed=2)[0]
        results = bench(old, new, folder)
    print(f"{'stage':<12}{'seconds':>9}{'peak MiB':>10}")
    for name, (seconds, mib) in results.items():
        print(f"{name:<12}{seconds:>9.1f}{mib:>10.0f}")
    check, compare = results["check old"], results["compare"]
    print(f"ratio compare / check: time {compare[0] / check[0]:.2f}, "
          f"peak memory {compare[1] / check[1]:.2f}")


if __name__ == "__main__":
    main()
