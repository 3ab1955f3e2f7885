"""A child process measured: its wall time from outside and its own peak resident memory.

The child runs its Python module under ``bench.peak``, which writes the process's own VmHWM when
it ends: not ``ru_maxrss`` from ``os.wait4``, which also counts the parent's memory at the fork
(a 1.2 GiB parent made ``python -c pass`` report 1,279 MiB), and not a sample that could miss a
short peak. A child killed for memory has no report; the watchdog's last sample of its
high-water mark stands for it.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import IO


@dataclass(frozen=True)
class Measured:
    """How one child process went: seconds, peak MiB, exit code and its last words on failure."""

    seconds: float
    peak_mib: float
    exit_code: int
    error: str = ""

    @property
    def ok(self) -> bool:
        """Whether the child exited with 0."""
        return self.exit_code == 0


def resident_mib(pid: int, field: str = "VmRSS") -> float:
    """A process's resident memory now (VmRSS) or at its peak (VmHWM), from /proc; NaN when
    the process is gone."""
    try:
        lines = Path(f"/proc/{pid}/status").read_text().splitlines()
    except OSError:
        return float("nan")
    for line in lines:
        if line.startswith(f"{field}:"):
            return int(line.split()[1]) / 1024
    return float("nan")


class Watchdog:
    """Watches one child process of ours: keeps its peak resident memory (``peak``, which
    outlives the process) and kills it when its memory passes a limit, so a benchmark never
    takes the memory other work on the machine needs; ``killed`` says what it saw."""

    def __init__(self, pid: int, limit_mib: float | None, every: float = 0.2) -> None:
        self.pid, self.limit, self.every = pid, limit_mib, every
        self.killed: str | None = None
        self.peak = 0.0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._watch, daemon=True)
        self._thread.start()

    def _watch(self) -> None:
        while not self._stop.wait(self.every):
            rss, high = resident_mib(self.pid), resident_mib(self.pid, "VmHWM")
            self.peak = max(self.peak, high if high == high else 0.0)  # NaN once it is gone
            if self.limit is not None and rss > self.limit:
                os.kill(self.pid, signal.SIGKILL)
                self.killed = (f"killed: resident memory {rss:,.0f} MiB passed "
                               f"{self.limit:,.0f} MiB")
                return

    def stop(self) -> None:
        """Stop watching (before the process is reaped, so its id is still ours)."""
        self._stop.set()
        if self._thread.is_alive():
            self._thread.join()


def measure(target: str | Path, *args: str | Path,
            stdout: IO[bytes] | int = subprocess.DEVNULL, env: Mapping[str, str] | None = None,
            max_mib: float | None = None) -> Measured:
    """Run the Python module (or script) ``target`` with ``args`` in a child process to its
    end; stderr is kept aside and its last line reported on failure. A child whose resident
    memory passes ``max_mib`` is killed and said to be."""
    with tempfile.TemporaryDirectory(prefix="bodycensus-child-") as tmp:
        report, errors_path = Path(tmp) / "peak", Path(tmp) / "stderr"
        argv = [sys.executable, "-m", "bodycensus.bench.peak", str(report), str(target),
                *map(str, args)]
        with errors_path.open("wb") as errors:
            measured = _run(argv, stdout, errors, env, max_mib, report)
        if measured.exit_code != 0 and not measured.error:
            lines = errors_path.read_text("utf-8", "replace").strip().splitlines()
            measured = replace(measured, error=lines[-1] if lines else
                               f"exit code {measured.exit_code}")
    return measured


def _run(argv: list[str], stdout: IO[bytes] | int, errors: IO[bytes],
         env: Mapping[str, str] | None, max_mib: float | None, report: Path) -> Measured:
    """Start, watch and reap one child; its time, peak (reported, else sampled) and exit."""
    started = time.perf_counter()
    child = subprocess.Popen(argv, stdout=stdout, stderr=errors,
                             env=None if env is None else dict(env))
    watchdog = Watchdog(child.pid, max_mib)
    os.waitid(os.P_PID, child.pid, os.WEXITED | os.WNOWAIT)  # ended, not yet reaped
    seconds = time.perf_counter() - started
    watchdog.stop()
    _, status = os.waitpid(child.pid, 0)
    child.returncode = code = os.waitstatus_to_exitcode(status)  # reaped here, not by Popen
    peak = float(report.read_text()) if report.is_file() else watchdog.peak
    return Measured(seconds, peak, code, watchdog.killed or "")
