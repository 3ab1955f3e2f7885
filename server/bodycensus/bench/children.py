"""A child process measured from outside: its wall time and its own peak resident memory.

The peak comes from the kernel's resource usage of that one child (``os.wait4``), so it is the
child's own high-water mark, not the parent's carried through fork and exec, and not a sample
that could miss a short peak.
"""

from __future__ import annotations

import os
import signal
import subprocess
import tempfile
import threading
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
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


def measure(argv: Sequence[str | Path], stdout: IO[bytes] | int = subprocess.DEVNULL,
            env: Mapping[str, str] | None = None, max_mib: float | None = None) -> Measured:
    """Run ``argv`` to its end; stderr is kept aside and its last line reported on failure.
    A child whose resident memory passes ``max_mib`` is killed and said to be."""
    with tempfile.TemporaryFile() as errors:
        started = time.perf_counter()
        child = subprocess.Popen([str(a) for a in argv], stdout=stdout, stderr=errors,
                                 env=None if env is None else dict(env))
        watchdog = Watchdog(child.pid, max_mib)
        os.waitid(os.P_PID, child.pid, os.WEXITED | os.WNOWAIT)  # ended, not yet reaped
        seconds = time.perf_counter() - started
        watchdog.stop()
        _, status, usage = os.wait4(child.pid, 0)
        child.returncode = code = os.waitstatus_to_exitcode(status)  # reaped here, not by Popen
        error = watchdog.killed or ""
        if code != 0 and not error:
            errors.seek(0)
            lines = errors.read().decode("utf-8", "replace").strip().splitlines()
            error = lines[-1] if lines else f"exit code {code}"
    return Measured(seconds, usage.ru_maxrss / 1024, code, error)  # ru_maxrss: KiB on Linux
