"""What every diagram is built from: axes, the run's ranges, flagged bodies, JSON-ready rows."""

from __future__ import annotations

import polars as pl
import pytest

from bodycensus.diagrams import base
from bodycensus.diagrams.base import Axis, Run
from bodycensus.diagrams.shapes import Choice, Choices
from bodycensus.science.rules.base import FINDING_SCHEMA
from bodycensus.science.rules.orbit import OrbitSettings


def test_axis_coordinates_log_linear_and_windowed() -> None:
    frame = pl.DataFrame({"v": [100.0, 0.0, -1.0, None, 1e4]})
    assert frame.select(Axis("v").expr())["v"].to_list() == pytest.approx(
        [2.0, None, None, None, 4.0])
    # a period ratio as a residual in per cent, (ratio - 1) x 100, held in a +-10 % window
    percent = Axis("v", scale=0.01, log=False, offset=100.0, window=(-10.0, 10.0))
    ratios = pl.DataFrame({"v": [1.0, 1.04, 0.5, 3.0, None]})
    assert ratios.select(percent.expr())["v"].to_list() == pytest.approx(
        [0.0, 4.0, -10.0, 10.0, None])
    assert percent.coordinate(1.04) == pytest.approx(4.0)
    assert Axis("v", 1e3).coordinate(1e6) == pytest.approx(3.0)
    assert Axis("v").coordinate(None) is None


def test_log_ranges_skip_values_that_have_no_logarithm() -> None:
    frame = pl.DataFrame({"v": [0.0, -5.0, 2.0, 8.0, float("inf")]})
    row = frame.select(Axis("v").range_exprs("v")).row(0, named=True)
    assert (row["v__lo"], row["v__hi"]) == (2.0, 8.0)


def _run(findings: pl.DataFrame, ranges: dict[Axis, base.Range] | None = None) -> Run:
    bodies = pl.LazyFrame({"id": ["a", "b", "c"], "label": ["x"] * 3, "v": [10.0, 100.0, 1000.0]})
    return Run(bodies, findings.lazy(), pl.DataFrame(), frozenset({"id", "label", "v"}),
               pl.DataFrame({"label": ["x"], "count": [3]}), ranges or {}, {}, OrbitSettings())


def _findings(rows: list[tuple[str, str, str, float | None]]) -> pl.DataFrame:
    frame = pl.DataFrame(rows, schema=["body", "rule", "severity", "margin"], orient="row")
    return frame.with_columns(
        *[pl.lit(None, dtype).alias(k) for k, dtype in FINDING_SCHEMA.items() if k not in frame])


def test_flagged_plan_keeps_each_bodys_worst_finding_most_serious_first() -> None:
    run = _run(_findings([("a", "r1", "suspect", 5.0), ("a", "r2", "impossible", 0.1),
                          ("b", "r1", "suspect", 9.0), ("c", "r1", "note", 1.0),
                          ("c", "other", "error", 1.0)]))
    rows = base.flagged_rows(run.flagged_plan(("r1", "r2"), (Axis("v"),)).collect())
    assert [(r["body"], r["rule"]) for r in rows] == [("a", "r2"), ("b", "r1"), ("c", "r1")]
    assert [r["x"] for r in rows] == pytest.approx([1.0, 2.0, 3.0])  # log10 of the values


def test_flagged_plan_is_capped(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(base, "FLAGGED_CAP", 2)
    run = _run(_findings([(b, "r", "suspect", float(i)) for i, b in enumerate("abc")]))
    rows = run.flagged_plan(("r",), (Axis("v"),)).collect()
    assert rows["body"].to_list() == ["c", "b"]  # the largest margins


def test_edges_widen_to_show_reference_lines_only_when_there_is_data() -> None:
    axis = Axis("v")
    run = _run(_findings([]), {axis: (1.0, 3.0)})
    plain, widened = run.edges(axis, 10), run.edges(axis, 10, references=[0.0, 5.0])
    assert (plain[0], plain[-1]) == (1.0, 3.0)
    assert widened[0] < 0.0 and widened[-1] > 5.0
    assert _run(_findings([])).edges(axis, 10, references=[0.0]) == []


def test_records_are_strict_json() -> None:
    rows = base.records(pl.DataFrame({"a": [1.0, float("nan"), float("inf")], "b": ["x"] * 3}))
    assert [r["a"] for r in rows] == [1.0, None, None]
    assert base.records(None) == []


def test_a_diagram_without_choices_resolves_to_none() -> None:
    diagram = base.Diagram(key="k", title="t", caption="c.", axes=(), rules=(),
                           aggregate=lambda run: None, figure=lambda agg, choice: {
                               "data": [], "layout": {}})
    assert diagram.resolve(None, Choice(label="x", field="y")) == Choices()
    assert Choices(label="x", field="y").choice == Choice("x", "y")
