"""Runs of equal values in one sorted sample, scanned chunk by chunk: how many distinct values
there are, the lattice step they sit on, where the values held by many bodies start and stop,
and the spacings wider than a reach.

The detector held every distinct value and its count (three 8-byte arrays as long as the sample,
plus the spacings' temporaries: over 0.5 GB for one family's field at 30M bodies); these scans
hold one chunk's temporaries and what they report, and give the same numbers as the whole-array
forms (tests/test_artefacts_bounded.py). Hand-written because numpy has no chunked run scan.
"""

from __future__ import annotations

import math
from collections.abc import Iterator

import numpy as np

CHUNK = 1 << 20  # values compared at a time: a chunk's temporaries are a few MB


def _spans(n: int, reach: int) -> Iterator[tuple[int, int]]:
    """[start, stop) of each chunk of the positions j whose partner j + ``reach`` is in a
    sample of ``n`` values."""
    for start in range(0, max(n - reach, 0), CHUNK):
        yield start, min(start + CHUNK, n - reach)


def distinct_count(s: np.ndarray) -> int:
    """How many distinct values the sorted ``s`` holds."""
    if not len(s):
        return 0
    return 1 + sum(int(np.count_nonzero(s[a + 1:b + 1] != s[a:b])) for a, b in _spans(len(s), 1))


def lattice_step(s: np.ndarray, n_distinct: int) -> float:
    """The step of the lattice the values of the sorted ``s`` (``n_distinct`` distinct ones) sit
    on (rounded or integer data), else 0: the smallest spacing between distinct values, when
    every value is a whole number of it from the first (within 1e-3)."""
    if n_distinct < 2:
        return 0.0
    step = math.inf
    for a, b in _spans(len(s), 1):
        spacing = s[a + 1:b + 1] - s[a:b]
        spacing = spacing[spacing > 0]
        if spacing.size:
            step = min(step, float(spacing.min()))
    if (s[-1] - s[0]) / step > 1e7:  # too fine to tell a lattice from float noise
        return 0.0
    for a, b in _spans(len(s), 0):
        units = (s[a:b] - s[0]) / step
        if not np.all(np.abs(units - np.round(units)) < 1e-3):
            return 0.0
    return step


def crowded_runs(s: np.ndarray, more_than: float) -> tuple[np.ndarray, np.ndarray]:
    """Where each run of one value held more than ``more_than`` times in the sorted ``s`` starts
    and stops (positions, ascending): a value at j is held k + 1 times or more where
    s[j] == s[j + k]."""
    reach = max(math.floor(more_than), 0)
    found: list[np.ndarray] = []
    for a, b in _spans(len(s), reach):
        values = s[a:b][s[a:b] == s[a + reach:b + reach]]
        if values.size:
            new = np.empty(values.size, dtype=bool)
            new[0] = not found or values[0] != found[-1][-1]
            np.not_equal(values[1:], values[:-1], out=new[1:])
            if new.any():
                found.append(values[new])
    values = np.concatenate(found) if found else s[:0]
    return np.searchsorted(s, values, "left"), np.searchsorted(s, values, "right")


def wide_spacings(s: np.ndarray, reach: float, log: bool) -> Iterator[np.ndarray]:
    """Positions j where the sorted ``s`` jumps by at least ``reach`` (in log10 when ``log``)
    from s[j] to s[j + 1], chunk by chunk (ascending)."""
    for a, b in _spans(len(s), 1):
        yield np.flatnonzero(s[a + 1:b + 1] >= s[a:b] * 10**reach if log
                             else s[a + 1:b + 1] - s[a:b] >= reach) + a
