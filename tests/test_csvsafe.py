"""CSV that a spreadsheet opens as data: text cells that start like a formula get a leading '.

OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection): a cell starting with
= + - @, a tab or a carriage return can run as a formula in a spreadsheet.
"""

from __future__ import annotations

import polars as pl
import pytest
from polars.testing import assert_frame_equal

from bodycensus.storage.csvsafe import neutralise_formulas

CELLS = ["=HYPERLINK(\"http://x\")", "+1+1", "-2+3", "@SUM(A1)", "\t=1", "\r=1", "plain",
         "a=b", "", None]
SAFE = ["'=HYPERLINK(\"http://x\")", "'+1+1", "'-2+3", "'@SUM(A1)", "'\t=1", "'\r=1", "plain",
        "a=b", "", None]


@pytest.mark.parametrize("lazy", [False, True])
def test_text_cells_that_start_like_a_formula_are_quoted(lazy: bool) -> None:
    frame = pl.DataFrame({"label": CELLS, "value": [-1.5] * len(CELLS)})
    out = neutralise_formulas(frame.lazy() if lazy else frame)
    result = out.collect() if isinstance(out, pl.LazyFrame) else out
    assert isinstance(out, pl.LazyFrame) == lazy
    assert result["label"].to_list() == SAFE


def test_numbers_stay_numbers_and_other_columns_untouched() -> None:
    frame = pl.DataFrame({"margin": [-0.5, 2.0], "rows": [-3, 4], "locked": [True, False]})
    assert_frame_equal(neutralise_formulas(frame), frame)
    assert "-0.5" in neutralise_formulas(frame).write_csv()


def test_categorical_and_enum_text_is_quoted_too() -> None:
    frame = pl.DataFrame({"c": pl.Series(["=1", "ok"], dtype=pl.Categorical),
                          "e": pl.Series(["@x", "ok"], dtype=pl.Enum(["@x", "ok"]))})
    out = neutralise_formulas(frame)
    assert out["c"].to_list() == ["'=1", "ok"] and out["e"].to_list() == ["'@x", "ok"]
