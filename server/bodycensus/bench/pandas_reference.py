"""A plain pandas implementation of bodycensus's rules, the baseline ``bodycensus bench`` times
``bodycensus check`` against: ``reference_findings(csv)`` reads a demo catalogue with
``pandas.read_csv`` and returns the findings of every rule (body, rule, severity, value, limit).

Plain on purpose: the obvious way a notebook would write it, whole-table pandas and numpy
(``read_csv``, ``groupby().transform``, ``merge``, ``groupby().shift``), the whole catalogue in
memory at once, not tuned. Its findings equal the engine's (tests/test_pandas_reference.py), so
the benchmark compares two implementations of the same answers. Three steps, one module each:
``pandas_catalogue`` (read and convert to SI), ``pandas_context`` (derived columns),
``pandas_rules`` (the rules). It uses ``science`` for formulas, constants and the label ->
family guess, never the engine's polars context or rule expressions.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from bodycensus.bench.pandas_catalogue import read_catalogue
from bodycensus.bench.pandas_context import derive
from bodycensus.bench.pandas_rules import FINDING_COLUMNS, RULES
from bodycensus.science.rules.orbit import OrbitSettings

# The rules this reference implements, in the engine's report order (all of them: the test
# checks this against the engine's registry).
IMPLEMENTED_RULES: tuple[str, ...] = tuple(RULES)
COLUMNS = ("body", "rule", "severity", "value", "limit")


def reference_findings(csv: Path, settings: OrbitSettings | None = None) -> pd.DataFrame:
    """Every finding of every implemented rule on the demo catalogue ``csv``: columns body,
    rule, severity, value, limit; rule by rule in report order, each rule's in file order."""
    context = derive(read_catalogue(Path(csv)))
    chosen = settings or OrbitSettings()
    with np.errstate(all="ignore"):  # NaN, inf and 0/0 are absent values here, not faults
        found = [RULES[rule](context, chosen) for rule in IMPLEMENTED_RULES]
    findings = pd.concat(found, ignore_index=True) if found else pd.DataFrame(
        columns=list(FINDING_COLUMNS))
    return findings[list(COLUMNS)].reset_index(drop=True)
