"""The plain pandas reference of the rules (``bench.pandas_reference``) finds what the engine
finds: on the shipped sample and on a 50,000-body demo catalogue, the same (body, rule,
severity) findings, each as often, with value and limit equal to 1e-9 relative (absent as
absent). ``bodycensus bench`` times the two against each other on the same file, so they must
be two implementations of the same answers.

The reference is written apart from the engine: it may take formulas, constants and the label ->
family guess from ``science``, never the engine's polars context or rule expressions (checked
below on its imports).
"""

from __future__ import annotations

import ast
from pathlib import Path

import architecture
import polars as pl
import pytest

from bodycensus.bench.pandas_reference import COLUMNS, IMPLEMENTED_RULES, reference_findings
from bodycensus.demo import write_demo
from bodycensus.engines.local import CheckOptions, check_file
from bodycensus.errors import InputError
from bodycensus.science.rules import RULE_IDS

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "varrow_shoals.csv"
KEY = ["body", "rule", "severity"]
RELATIVE = 1e-9  # numpy and polars may round one formula differently in its last bits


def _engine(csv: Path, workdir: Path) -> pl.DataFrame:
    """The engine's findings of the implemented rules (``bodycensus check``'s engine)."""
    result = check_file(csv, workdir, CheckOptions(artefacts=False))
    return result.findings.filter(pl.col("rule").is_in(IMPLEMENTED_RULES)).select(COLUMNS)


def _close(a: str, b: str) -> pl.Expr:
    """Equal to RELATIVE, or both absent."""
    near = (pl.col(a) - pl.col(b)).abs() <= RELATIVE * pl.max_horizontal(pl.col(a).abs(),
                                                                        pl.col(b).abs())
    return (pl.col(a).is_null() & pl.col(b).is_null()) | near.fill_null(False)


def differences(ours: pl.DataFrame, theirs: pl.DataFrame) -> list[str]:
    """What differs between two findings tables, one line each (empty when they agree)."""
    counts = (ours.group_by(KEY).len("ours")
              .join(theirs.group_by(KEY).len("theirs"), on=KEY, how="full", coalesce=True)
              .fill_null(0).filter(pl.col("ours") != pl.col("theirs")).sort(KEY))
    lines = [f"{r['body']} {r['rule']} {r['severity']}: {r['ours']} vs {r['theirs']}"
             for r in counts.iter_rows(named=True)]
    if lines:
        return lines
    order = [*KEY, "value", "limit"]
    paired = pl.concat([ours.sort(order, nulls_last=True),
                        theirs.sort(order, nulls_last=True).select(
                            pl.col("value").alias("value_2"), pl.col("limit").alias("limit_2"))],
                       how="horizontal")
    bad = paired.filter(~(_close("value", "value_2") & _close("limit", "limit_2")))
    return [f"{r['body']} {r['rule']}: value {r['value']} vs {r['value_2']}, limit {r['limit']} "
            f"vs {r['limit_2']}" for r in bad.iter_rows(named=True)]


def _reference(csv: Path) -> pl.DataFrame:
    found = reference_findings(csv)
    assert list(found.columns) == list(COLUMNS)
    return pl.from_pandas(found).with_columns(pl.col("value", "limit").cast(pl.Float64))


def test_the_reference_implements_every_rule_in_report_order() -> None:
    assert IMPLEMENTED_RULES == RULE_IDS


def test_same_findings_as_the_engine_on_the_shipped_sample(tmp_path: Path) -> None:
    ours, engine = _reference(SAMPLE), _engine(SAMPLE, tmp_path / "run")
    assert differences(ours, engine) == []
    assert ours.height == engine.height == 577
    # every rule fires on the sample (it plants each defect), so none is compared vacuously
    assert set(ours["rule"]) == set(IMPLEMENTED_RULES)


def test_same_findings_as_the_engine_on_a_50k_demo(tmp_path: Path) -> None:
    csv, _ = write_demo(tmp_path / "demo.csv", 50_000, seed=5)
    ours, engine = _reference(csv), _engine(csv, tmp_path / "run")
    assert differences(ours, engine) == []
    assert ours.height == engine.height > 1000


def test_the_comparison_sees_a_changed_value_and_a_missing_finding() -> None:
    """The check above can fail: a value off by 1e-6 and a dropped finding are both seen."""
    ours = _reference(SAMPLE)
    nudged = ours.with_columns(pl.when(pl.col("rule") == "kepler-mismatch")
                               .then(pl.col("value") * (1 + 1e-6)).otherwise(pl.col("value")))
    assert any("kepler-mismatch" in line for line in differences(nudged, ours))
    assert differences(ours.slice(1), ours) != []


def test_a_file_that_is_not_a_demo_catalogue_is_refused_in_one_line(tmp_path: Path) -> None:
    other = tmp_path / "planets.csv"
    other.write_text("id,mass\nP1,1.0\n", encoding="utf-8")
    with pytest.raises(InputError, match=r"^planets\.csv: not a demo catalogue") as refused:
        reference_findings(other)
    assert "\n" not in str(refused.value)


REFERENCE = [m for m in architecture.modules() if m.name.startswith("bodycensus.bench.pandas_")]


def test_the_reference_reuses_no_engine_context_or_rule_expression() -> None:
    """From the engine's rule modules it takes constants (UPPER_CASE) and the OrbitSettings
    record only; nothing from engines, input or storage."""
    assert len(REFERENCE) == 4
    for module in REFERENCE:
        assert {architecture.floor_of(i) for i in module.imports} <= {"base", "science",
                                                                     "bench"}, module.name
        tree = ast.parse(module.path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and (node.module or "").startswith(
                    "bodycensus.science.rules"):
                names = [alias.name for alias in node.names]
                assert all(n.isupper() or n == "OrbitSettings" for n in names), (module.name,
                                                                                 names)
