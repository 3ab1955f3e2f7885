"""A child process measured from outside: its wall time and its own peak resident memory.

The peak comes from the kernel's resource usage of that one child (``os.wait4``), so it is the
child's own high-water mark, not the parent's carried through fork and exec, and not a sample
that could miss a short peak.
"""

from __future__ import annotations

import os
import subprocess
import tempfile
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


def measure(argv: Sequence[str | Path], stdout: IO[bytes] | int = subprocess.DEVNULL,
            env: Mapping[str, str] | None = None) -> Measured:
    """Run ``argv`` to its end; stderr is kept aside and its last line reported on failure."""
    with tempfile.TemporaryFile() as errors:
        started = time.perf_counter()
        child = subprocess.Popen([str(a) for a in argv], stdout=stdout, stderr=errors,
                                 env=None if env is None else dict(env))
        _, status, usage = os.wait4(child.pid, 0)
        seconds = time.perf_counter() - started
        child.returncode = code = os.waitstatus_to_exitcode(status)  # reaped here, not by Popen
        error = ""
        if code != 0:
            errors.seek(0)
            lines = errors.read().decode("utf-8", "replace").strip().splitlines()
            error = lines[-1] if lines else f"exit code {code}"
    return Measured(seconds, usage.ru_maxrss / 1024, code, error)  # ru_maxrss: KiB on Linux
