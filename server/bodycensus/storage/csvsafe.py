"""CSV that a spreadsheet opens as data: text cells it would run as a formula get a leading '.

A cell starting with ``= + - @`` (or a tab or carriage return, which some spreadsheets skip
before one) is a formula to Excel, LibreOffice and Google Sheets: OWASP, "CSV Injection"
(owasp.org/www-community/attacks/CSV_Injection). Only text columns change; a negative number in
a numeric column stays a number.
"""

from __future__ import annotations

from typing import TypeVar

import polars as pl

FORMULA_START = r"^[=+\-@\t\r]"
_TEXT_TYPES = (pl.String, pl.Categorical, pl.Enum)
Frame = TypeVar("Frame", pl.DataFrame, pl.LazyFrame)


def neutralise_formulas(frame: Frame) -> Frame:
    """``frame`` with ' put before every text cell that starts like a formula."""
    schema = frame.collect_schema() if isinstance(frame, pl.LazyFrame) else frame.schema
    texts = [name for name, dtype in schema.items() if isinstance(dtype, _TEXT_TYPES)]
    return frame.with_columns(
        pl.when(pl.col(c).cast(pl.String).str.contains(FORMULA_START))
        .then(pl.lit("'") + pl.col(c).cast(pl.String))
        .otherwise(pl.col(c).cast(pl.String)).alias(c) for c in texts
    )
