"""Run one Python module (or script) as ``__main__`` in this process and, however it ends,
write this process's peak resident memory (VmHWM, MiB) to a file.

``python -m bodycensus.bench.peak REPORT MODULE ARGS...`` is how ``bench.children`` starts what
it measures. The peak is read from inside because the parent cannot read it reliably from
outside: ``ru_maxrss`` of a child that was forked and then exec'd also counts the parent's
resident memory at the fork (Linux keeps the old address space's high-water mark across exec),
so a big parent made a small child look big; and /proc of an exited child is gone.
"""

from __future__ import annotations

import runpy
import sys
from pathlib import Path


def own_peak_mib() -> float:
    """This process's peak resident memory so far, in MiB (VmHWM; NaN where /proc lacks it)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def main() -> None:
    """Run the target with its own arguments; write the peak even when it exits or raises."""
    report, target, *args = sys.argv[1:]
    sys.argv = [target, *args]
    try:
        if target.endswith(".py"):
            runpy.run_path(target, run_name="__main__")
        else:
            runpy.run_module(target, run_name="__main__", alter_sys=True)
    finally:
        Path(report).write_text(f"{own_peak_mib()}\n", encoding="utf-8")


if __name__ == "__main__":
    main()
