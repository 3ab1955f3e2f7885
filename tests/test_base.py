"""The rule record and its runner: when a rule fires, its margin, which bodies it judges, the
findings frame, the coverage table and the numbers in messages. Rules here are made up for the
test; the real ones are checked in test_rules.py."""

from __future__ import annotations

import polars as pl
import pytest

from bodycensus.science.rules.base import FINDING_SCHEMA, Rule, coverage, evaluate, fmt


def _context() -> pl.LazyFrame:
    """Four bodies: two rocks (one orbiting, one in a parent loop), a star, an id-less row."""
    return pl.LazyFrame({
        "id": ["r1", "r2", "s1", None], "label": ["rocky", "rocky", "G2V", "rocky"],
        "family": ["rock", "rock", "star", "rock"], "parent": ["s1", "r2", None, "s1"],
        "_in_cycle": [False, True, False, False], "_row": [1, 2, 3, 4],
        "x": [10.0, 2.0, 7.0, None], "y": [1.0, 1.0, 1.0, 1.0],
    })


def _rule(**changes: object) -> Rule:
    base: dict[str, object] = dict(
        id="x-limit", title="x past 5", severity="suspect", source="made up for the test",
        needs=("x",), value=pl.col("x"), limit=pl.lit(5.0), unit="1",
        message=pl.format("x is {}", fmt(pl.col("x"))))
    return Rule(**{**base, **changes})  # type: ignore[arg-type]


def _fired(rule: Rule) -> pl.DataFrame:
    return evaluate(_context(), [rule]).collect()


def test_above_fires_past_the_limit_with_a_positive_margin() -> None:
    found = _fired(_rule())
    assert found["body"].to_list() == ["r1", "s1"]
    assert found["margin"].to_list() == pytest.approx([(10 - 5) / 5, (7 - 5) / 5])
    assert found["message"].to_list() == ["x is 10", "x is 7"]
    assert found.schema == pl.Schema(FINDING_SCHEMA)


def test_below_fires_under_the_limit() -> None:
    found = _fired(_rule(direction="below"))
    assert found["body"].to_list() == ["r2"]
    assert found["margin"].to_list() == pytest.approx([(5 - 2) / 5])


def test_an_explicit_verdict_and_a_two_sided_margin() -> None:
    found = _fired(_rule(direction="none", fires=(pl.col("x") - 5.0).abs() > 2.5))
    assert sorted(found["body"].to_list()) == ["r1", "r2"]
    assert sorted(found["margin"].to_list()) == pytest.approx([3 / 5, 5 / 5])


def test_families_and_orbit_scope_choose_the_bodies() -> None:
    rocks = _fired(_rule(families=frozenset({"rock"})))
    assert rocks["body"].to_list() == ["r1"]  # s1 is a star; the id-less row has no x
    orbiting = _fired(_rule(scope="orbit", limit=pl.lit(0.0)))
    assert orbiting["body"].to_list() == ["r1"]  # r2 is in a parent loop, s1 has no parent


def test_a_body_without_id_is_named_by_its_row_and_severity_may_vary() -> None:
    rule = _rule(needs=("y",), value=pl.col("y"), limit=pl.lit(0.5),
                 severity_expr=pl.when(pl.col("family") == "star").then(pl.lit("note"))
                 .otherwise(pl.lit("suspect")))
    found = _fired(rule)
    assert found["body"].to_list() == ["r1", "r2", "s1", "row 4"]
    assert found["severity"].to_list() == ["suspect", "suspect", "note", "suspect"]


def test_no_rules_give_an_empty_frame_of_the_contract() -> None:
    empty = evaluate(_context(), []).collect()
    assert empty.is_empty() and empty.schema == pl.Schema(FINDING_SCHEMA)


def test_coverage_counts_judged_and_skipped_bodies_and_says_why() -> None:
    rules = [_rule(), _rule(id="giants", families=frozenset({"gas_giant"})),
             _rule(id="all-y", needs=("y",))]
    table = coverage(_context(), rules)
    assert table.columns == ["rule", "title", "severity", "evaluated", "skipped", "why"]
    rows = {r["rule"]: r for r in table.iter_rows(named=True)}
    assert (rows["x-limit"]["evaluated"], rows["x-limit"]["skipped"]) == (3, 1)
    assert rows["x-limit"]["why"] == "1 without x"  # how many, and what they lack
    assert rows["giants"]["why"] == "no body of the families it applies to"
    assert (rows["all-y"]["evaluated"], rows["all-y"]["why"]) == (4, "")


def test_why_names_columns_without_their_working_prefix() -> None:
    rule = _rule(needs=("_x",), value=pl.col("_x"))
    table = coverage(_context().with_columns(_x=pl.col("x")), [rule])
    assert table["why"].to_list() == ["1 without x"]


def test_why_says_a_working_column_in_the_catalogues_terms() -> None:
    """The engine's columns (``_a``, ``inner_apoapsis``) become what the catalogue lacks."""
    context = _context().with_columns(_a=pl.col("x"), inner_apoapsis=pl.col("x"))
    table = coverage(context, [_rule(needs=("_a", "inner_apoapsis"), value=pl.col("_a"))])
    assert table["why"].to_list() == ["1 without a sibling further in; "
                                      "1 without an orbit (semi-major axis)"]


@pytest.mark.parametrize(("value", "text"), [
    (1234.5678, "1235"), (2.5, "2.5"), (100.0, "100"), (-0.5, "-0.5"), (0.0, "0"),
    (0.001, "0.001"), (0.000123456, "1.235e-4"), (12345678.0, "1.235e7"),
    (-2.5e-7, "-2.5e-7"),
    # exact and rounded-up powers of ten keep a mantissa below 10
    (1e6, "1.0e6"), (9.99996e6, "1.0e7"), (-1e9, "-1.0e9"),
])
def test_numbers_in_messages_have_four_significant_figures(value: float, text: str) -> None:
    frame = pl.DataFrame({"v": [value, None]})
    assert frame.select(fmt(pl.col("v")))["v"].to_list() == [text, None]
