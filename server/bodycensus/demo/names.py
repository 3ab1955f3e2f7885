"""Invented names for the demo catalogue: syllable-built system names, lettered planets, moons
numbered in Roman numerals (no real star or planet names, no names from any game)."""

from __future__ import annotations

import numpy as np
import polars as pl

from bodycensus.demo.kinds import PLANET_CODE0

_ONSETS = ("Ka", "Ve", "Lor", "Tis", "Um", "Qar", "Mo", "Zeth", "Quo", "Bri", "Ost", "Nel",
           "Fa", "Dru", "Iv", "Sel", "Hen", "Oru", "Yav", "Cel")
_MIDDLES = ("ran", "vek", "mir", "dol", "sa", "thu", "gen", "lo", "ris", "cam", "bel", "ot",
            "un", "zar", "pe", "wyn")
_ENDS = ("a", "is", "or", "en", "ux", "ia", "ell", "om", "ade", "ith", "", "une")
_ROMAN = (("M", 1000), ("CM", 900), ("D", 500), ("CD", 400), ("C", 100), ("XC", 90), ("L", 50),
          ("XL", 40), ("X", 10), ("IX", 9), ("V", 5), ("IV", 4), ("I", 1))


def roman(number: int) -> str:
    """``number`` (>= 1) in Roman numerals."""
    text = ""
    for symbol, value in _ROMAN:
        count, number = divmod(number, value)
        text += symbol * count
    return text


def _letter(index: int) -> str:
    """Planet letters b, c, ... z, then z26, z27, ..."""
    return chr(ord("b") + index) if index < 25 else f"z{index + 1}"


def system_names(sys: np.ndarray, rng: np.random.Generator) -> pl.Series:
    """One invented name per system (syllables plus a catalogue number), per row."""
    unique, inverse = np.unique(sys, return_inverse=True)
    n = len(unique)
    parts = [pl.Series(words, dtype=pl.String).gather(rng.integers(0, len(words), n))
             for words in (_ONSETS, _MIDDLES, _ENDS)]
    number = pl.Series(unique + 100).cast(pl.String)
    names = parts[0] + parts[1] + parts[2] + " " + number
    return names.gather(inverse)


def _position(tier: np.ndarray, sys: np.ndarray, parent: np.ndarray) -> np.ndarray:
    """Index of each row within its block: a system's orbiters, or one planet's moons."""
    n = len(tier)
    new = np.ones(n, dtype=bool)
    new[1:] = (sys[1:] != sys[:-1]) | (tier[1:] != tier[:-1]) | (parent[1:] != parent[:-1])
    start = np.maximum.accumulate(np.where(new, np.arange(n), 0))
    return np.arange(n) - start


def body_names(systems: pl.Series, tier: np.ndarray, sys: np.ndarray, parent: np.ndarray,
               code: np.ndarray) -> pl.Series:
    """Names: the system's for its primary, ``<system> B`` for a companion star, ``<system> c``
    for planets, ``<planet> II`` for moons, ``<planet> ring`` for a ring (tier 3). Call on the
    clean table (before defects)."""
    k = _position(tier, sys, parent)
    letters = pl.Series([_letter(i) for i in range(int(k.max()) + 1)], dtype=pl.String)
    numerals = pl.Series([roman(i + 1) for i in range(int(k.max()) + 1)], dtype=pl.String)
    suffix = pl.select(pl.when(pl.Series(code < PLANET_CODE0)).then(pl.lit("B"))
                       .otherwise(letters.gather(k))).to_series()
    names = pl.select(pl.when(pl.Series(tier == 0)).then(systems)
                      .otherwise(systems + " " + suffix)).to_series()
    moon, ring = np.flatnonzero(tier == 2), np.flatnonzero(tier == 3)
    moon_names = names.gather(parent[moon]) + " " + numerals.gather(k[moon])
    names = names.scatter(moon, moon_names)
    return names.scatter(ring, names.gather(parent[ring]) + " ring").alias("name")
