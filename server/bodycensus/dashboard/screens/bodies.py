"""The Bodies list: every body of a catalogue, flagged or not, with the Findings list's filters
(a body is listed when one of its findings passes the severity, rule, value and margin filters;
its label, family and a diagram's region filter the body itself), an order and exports.

Pages in the file's order without filters are slices of a copy of the listed columns stored in
that order (``bodies_by_row.parquet``, written after a run or on first use); other views sort
the filtered bodies (the engine stores bodies in its own order, so the file's order is a sort on
the row number too); the worst severity and number of findings are looked up for the page's
bodies only.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, Literal, TypedDict

import polars as pl

from bodycensus.dashboard.screens import tables
from bodycensus.dashboard.screens.regions import region_filter
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.science.severity import UNRANKED, name_expr
from bodycensus.storage.csvsafe import neutralise_formulas
from bodycensus.storage.sorted_spill import SAMPLE, AppendingWriter, RangeSpill, range_bounds
from bodycensus.storage.store import json_ready

IN_ROW_ORDER = "bodies_by_row.parquet"  # the listed columns of every body in the file's order
ROW_ORDER_VERSION = "1"  # in its metadata: a copy of another version is written again
ROW_GROUP = 4096  # bodies per row group of it: a page of 50 decodes one or two
BUCKET_ROWS = 500_000  # bodies sorted in memory at a time while writing it (2M: 1.58 GiB at 10M)
BATCH = 250_000  # bodies read at a time while writing it
LISTED = ("id", "name", "label", "family", "system", "parent", "mass", "radius",
          "semi_major_axis", "eccentricity", "period", "_row")
_FINDING_FILTERS = ("severity", "rule", "min_value", "max_value", "min_margin", "max_margin")


class BodiesPage(TypedDict):
    """One page of the filtered bodies."""

    total: int
    offset: int
    limit: int
    items: list[dict[str, Any]]


def _flagged_by(cat_dir: Path, state: ViewState) -> pl.LazyFrame:
    """The ids of bodies with a finding that passes the view's finding filters."""
    lf = tables.findings(cat_dir)
    exprs = [pl.col(col).is_in(list(values)) for col, values in
             (("severity", state.severity), ("rule", state.rule)) if values]
    for col, low, high in (("value", state.min_value, state.max_value),
                           ("margin", state.min_margin, state.max_margin)):
        exprs += [pl.col(col) >= low] if low is not None else []
        exprs += [pl.col(col) <= high] if high is not None else []
    return lf.filter(*exprs).select(pl.col("body").alias("id")).unique()


def filtered_bodies(cat_dir: Path, state: ViewState, with_worst: bool = False
                    ) -> pl.LazyFrame:
    """The bodies passing the view's filters, in its order (lazy); with each body's worst
    severity and number of findings when asked, or when the order needs them."""
    lf = tables.bodies(cat_dir)
    keep = [c for c in LISTED if c in lf.collect_schema()]
    filters = [pl.col(c).is_in(list(v)) for c, v in (("label", state.label),
                                                     ("family", state.family)) if v]
    region = region_filter(state)
    lf = lf.filter(*filters, *([region] if region is not None else [])) if filters or \
        region is not None else lf
    lf = lf.select(keep)
    if state.finding_filters:
        lf = lf.join(_flagged_by(cat_dir, state), on="id", how="semi", maintain_order="left")
    key, descending = state.order_key()
    if with_worst or key in ("worst", "findings"):
        worst = tables.body_worst(cat_dir).select(pl.col("body").alias("id"), "_rank",
                                                   "findings")
        lf = (lf.join(worst, on="id", how="left", maintain_order="left")
              .with_columns(pl.col("findings").fill_null(0),
                            pl.col("_rank").fill_null(UNRANKED)))
    by = "_rank" if key == "worst" else key
    return lf.sort([by, "_row"], descending=[descending, False], nulls_last=True)


def _flagged_first(cat_dir: Path, state: ViewState) -> tuple[pl.DataFrame, int] | None:
    """A page in the order of the worst finding (or most findings) without a filter on the
    bodies themselves: the flagged bodies are ranked from the findings alone (a small table),
    and only the page's rows are read; unflagged bodies follow in the file's order."""
    key, descending = state.order_key()
    if (key, descending) not in (("worst", False), ("findings", True)) or state.label or \
            state.family or region_filter(state) is not None:
        return None
    worst = tables.body_worst(cat_dir).rename({"body": "id"})
    if state.finding_filters:
        worst = worst.join(_flagged_by(cat_dir, state), on="id", how="semi")
    by = ["_rank", "findings", "id"] if key == "worst" else ["findings", "_rank", "id"]
    ranked = worst.sort(by, descending=[False, True, False] if key == "worst"
                        else [True, False, False]).select("id").collect()
    total = ranked.height if state.finding_filters else \
        int(tables.bodies(cat_dir).select(pl.len()).collect().item())
    ids = ranked["id"].slice(state.offset, state.limit).to_list()
    lf = tables.bodies(cat_dir)
    keep = [c for c in LISTED if c in lf.collect_schema()]
    found = lf.filter(pl.col("id").is_in(ids)).select(keep).unique("id", keep="first").collect()
    page = pl.DataFrame({"id": ids}).join(found, on="id", how="left", maintain_order="left")
    short = state.limit - page.height
    if short > 0 and not state.finding_filters:  # past the flagged: the rest in file order
        skip = max(0, state.offset - ranked.height)
        rest = (lf.join(ranked.lazy(), on="id", how="anti").select(keep).sort("_row")
                .slice(skip, short).collect())
        page = pl.concat([page, rest], how="diagonal_relaxed")
    return page, total


def write_bodies_by_row(folder: Path, bucket_rows: int = BUCKET_ROWS, batch: int = BATCH
                        ) -> Path:
    """Write ``bodies_by_row.parquet``: the listed columns of every body in the file's order
    (by ``_row``), so the Bodies list's default pages are slices, not a sort of every body; in
    bounded memory (``storage.sorted_spill``: ``batch`` bodies read at a time, ranges of about
    ``bucket_rows`` sorted alone)."""
    lf = tables.bodies(folder)
    listed = lf.select([c for c in LISTED if c in lf.collect_schema()])
    sample = lf.select("_row").gather_every(SAMPLE).collect()["_row"]
    bounds = range_bounds(sample, sample.len() * SAMPLE, bucket_rows)
    with AppendingWriter(folder / IN_ROW_ORDER, listed.head(0).collect().schema, ROW_GROUP,
                         {"bodycensus.bodies_by_row": ROW_ORDER_VERSION}) as out, \
            RangeSpill(out.dest, "_row", bounds) as spill:
        for chunk in listed.collect_batches(chunk_size=batch):
            spill.add(chunk)
        for bucket in spill.buckets():
            out.write(bucket.sort("_row", maintain_order=True))
    return out.dest


def _in_row_order(cat_dir: Path, state: ViewState) -> tuple[pl.DataFrame, int] | None:
    """A page in the file's order (either way) without any filter: a slice of
    ``bodies_by_row.parquet`` (written first when missing or of another version)."""
    key, descending = state.order_key()
    if key != "_row" or state.label or state.family or state.finding_filters or \
            region_filter(state) is not None:
        return None
    path = cat_dir / IN_ROW_ORDER
    if not path.is_file() or pl.read_parquet_metadata(path).get(
            "bodycensus.bodies_by_row") != ROW_ORDER_VERSION:
        write_bodies_by_row(cat_dir)
    lf = pl.scan_parquet(path)
    total = int(lf.select(pl.len()).collect().item())
    count = max(0, min(state.limit, total - state.offset))
    start = total - state.offset - count if descending else state.offset
    rows = lf.slice(start, count).collect()
    return (rows.reverse() if descending else rows), total


def bodies_page(cat_dir: Path, state: ViewState) -> BodiesPage:
    """One page of the filtered bodies, each with its worst severity and findings counted."""
    fast = _flagged_first(cat_dir, state) or _in_row_order(cat_dir, state)
    if fast is not None:
        rows, total = fast
    else:
        lf = filtered_bodies(cat_dir, state)
        total = int(lf.select(pl.len()).collect().item())
        rows = lf.slice(state.offset, state.limit).collect()
    worst = tables.worst_of(cat_dir, rows["id"].drop_nulls().to_list()) if rows.height else {}
    items = [{**r, "worst": worst.get(r["id"], (None, 0))[0],
              "findings": worst.get(r["id"], (None, 0))[1]} for r in rows.to_dicts()]
    return {"total": total, "offset": state.offset, "limit": state.limit,
            "items": json_ready(items)}


def export_bodies(cat_dir: Path, state: ViewState, fmt: Literal["csv", "parquet"],
                  dest: Path) -> Path:
    """Write every filtered body (no paging), with its worst severity and number of findings,
    to ``dest`` as CSV or Parquet, streaming; values in SI as stored."""
    lf = (filtered_bodies(cat_dir, state, with_worst=True)
          .with_columns(worst=name_expr("_rank")).drop("_rank"))
    if fmt == "csv":
        neutralise_formulas(lf).sink_csv(dest)
    else:
        lf.sink_parquet(dest)
    return dest
