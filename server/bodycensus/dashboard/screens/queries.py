"""The data functions behind both the JSON API and the pages: one result, two renderings.

Every function takes a finished catalogue folder (``Store.ready_dir``) and returns plain,
JSON-ready Python data. Findings are read lazily from Parquet, filtered, sorted and sliced before
anything is collected, so a catalogue of millions of rows answers a page in milliseconds.
"""

from __future__ import annotations

import functools
import json
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any, Literal, cast

import polars as pl

from bodycensus.dashboard.screens import tables
from bodycensus.dashboard.screens.regions import region_filter
from bodycensus.dashboard.screens.shapes import (
    MAX_RELATIVES,
    BodyDetail,
    FieldRow,
    FindingsPage,
    Overview,
    Relative,
    SystemAround,
    SystemDetail,
    SystemsPage,
    TreeRow,
    column_mapping,
)
from bodycensus.dashboard.screens.systems import (
    NO_SYSTEM,
    body_findings,
    scan_systems,
    system_key,
    systems_table,
)
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.diagrams.aggregates import VERSION, Aggregates, compute_aggregates
from bodycensus.diagrams.shapes import Artefact, CoverageRow
from bodycensus.errors import NotFound
from bodycensus.input.schema import CANONICAL_FIELDS, ColumnChoice
from bodycensus.science.rules.context import DERIVED_COLUMNS, ENGINE_COLUMNS
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.rules.ring_context import IN_METRES
from bodycensus.science.severity import SEVERITIES, name_expr, rank_expr
from bodycensus.science.units import FIELD_DIMENSIONS, SI_UNIT
from bodycensus.storage.csvsafe import neutralise_formulas
from bodycensus.storage.decisions import Decision
from bodycensus.storage.runs import (
    FINDINGS,
    findings_of,
    in_list_order,
    in_stored_order,
    scan_bodies,
    scan_bodies_around,
)
from bodycensus.storage.store import json_ready, write_json_atomic
from bodycensus.storage.triage import undecided, with_decisions

__all__ = ["NO_SYSTEM", "ViewState", "aggregates", "artefacts", "body_detail", "coverage",
           "export_findings", "findings_page", "overview", "system_detail", "systems_page"]

EXPORT_ORDER = ("body", "name", "system", "parent", "rule", "severity", "value", "limit", "unit",
                "margin", "message", "source", "label", "family", "_row")
_SYSTEM_COLUMNS = ("id", "name", "label", "family", "parent", "mass", "radius",
                   "semi_major_axis", "eccentricity", "periapsis", "apoapsis", "roche_rigid",
                   "roche_fluid", "hill_radius", "ring_inner_edge", "ring_outer_edge",
                   "ring_implied_density")


def _scan(cat_dir: Path, name: str) -> pl.LazyFrame:
    """A lazy scan of one of the engine's Parquet files (bodies in whichever layout
    ``storage.runs`` knows)."""
    if name == "bodies":
        return scan_bodies(cat_dir)
    return pl.scan_parquet(cat_dir / f"{name}.parquet")


def _filters(state: ViewState) -> list[pl.Expr]:
    """The filter expressions for the findings list."""
    exprs = [pl.col(col).is_in(list(values)) for col, values in
             (("severity", state.severity), ("rule", state.rule), ("label", state.label),
              ("family", state.family)) if values]
    for col, low, high in (("value", state.min_value, state.max_value),
                           ("margin", state.min_margin, state.max_margin)):
        if low is not None:
            exprs.append(pl.col(col) >= low)
        if high is not None:
            exprs.append(pl.col(col) <= high)
    return exprs


def filtered_findings(cat_dir: Path, state: ViewState, decisions: Sequence[Decision] = (),
                      decided: bool = True) -> pl.LazyFrame:
    """The findings that pass the view's filters, in the view's order, with the triage decision
    that covers each (lazy; without it when not ``decided``, unless the view asks for the
    undecided only); a diagram's region keeps the findings of the bodies drawn inside it. The
    default order is the stored one, so a page of it is a slice of the file
    (``storage.runs.write_findings``), not a sort."""
    lf = _scan(cat_dir, "findings")
    for expr in _filters(state):
        lf = lf.filter(expr)
    region = region_filter(state)
    if region is not None:
        inside = tables.bodies(cat_dir).filter(region).select(pl.col("id").alias("body"))
        lf = lf.join(inside, on="body", how="semi", maintain_order="left")
    if state.undecided:
        lf = undecided(with_decisions(lf, decisions, lambda: scan_bodies(cat_dir)))
    key, descending = state.sort_key()
    if in_stored_order(cat_dir, state.sort):
        pass
    elif key == "severity":
        lf = in_list_order(lf, descending)
    else:
        lf = lf.sort([key, "body"], descending=[descending, False], nulls_last=True)
    if decided and not state.undecided:
        lf = with_decisions(lf, decisions, lambda: scan_bodies(cat_dir))
    return lf


@functools.lru_cache(maxsize=1024)
def _filtered_total(cat_dir: Path, stamp: tuple[int, int, int], state: ViewState) -> int:
    """How many findings the filters of ``state`` keep, counted once per version (``stamp``:
    inode, mtime, size) of the findings file: the count scans every finding that passes the
    filters (a third of a findings page's time at 10M bodies), and the next page, another
    order or the JSON twin of the same filters asks for it again."""
    return int(filtered_findings(cat_dir, state, ()).select(pl.len()).collect().item())


def findings_page(cat_dir: Path, state: ViewState, decisions: Sequence[Decision] = ()
                  ) -> FindingsPage:
    """One page of the filtered findings: ``{"total", "offset", "limit", "items"}``; the
    decisions are laid over the page's findings only."""
    lf = filtered_findings(cat_dir, state, decisions, decided=state.undecided)
    if state.undecided:  # depends on the decisions too
        total = lf.select(pl.len()).collect().item()
    else:
        stat = (cat_dir / FINDINGS).stat()
        total = _filtered_total(cat_dir, (stat.st_ino, stat.st_mtime_ns, stat.st_size),
                                state.with_(sort=ViewState.sort, offset=0, limit=1))
    page = lf.slice(state.offset, state.limit)
    if not state.undecided:
        page = with_decisions(page, decisions, lambda: scan_bodies(cat_dir))
    return {"total": total, "offset": state.offset, "limit": state.limit,
            "items": json_ready(page.collect().to_dicts())}


def export_findings(cat_dir: Path, state: ViewState, fmt: Literal["csv", "parquet"],
                    dest: Path, decisions: Sequence[Decision] = ()) -> Path:
    """Write every filtered finding (no paging) to ``dest`` as CSV or Parquet, streaming, with
    the columns of the decision that covers each, and each body's name, system and parent
    beside its id."""
    lf = filtered_findings(cat_dir, state, decisions)
    have = lf.collect_schema().names()
    lf = lf.select([c for c in EXPORT_ORDER if c in have] +
                   [c for c in have if c not in EXPORT_ORDER])
    if fmt == "csv":
        neutralise_formulas(lf).sink_csv(dest)
    else:
        lf.sink_parquet(dest)
    return dest


def _choices(report: Mapping[str, Any] | None) -> dict[str, ColumnChoice]:
    """The ColumnChoice per field of a manifest's ingest report."""
    raw = column_mapping(report).get("choices", {})
    return {f: ColumnChoice(**c) for f, c in raw.items()}


def _field_rows(row: dict[str, Any], choices: dict[str, ColumnChoice]) -> list[FieldRow]:
    """Each canonical field: SI value and unit, and the source column, unit and value (a ring
    edge given in planet radii is shown in metres as derived from its planet's radius)."""
    out: list[FieldRow] = []
    for name in CANONICAL_FIELDS:
        choice, value = choices.get(name), row.get(name)
        original = value
        if choice is not None and choice.relative:
            value = row.get(IN_METRES[name])
        elif choice is not None and choice.unit is not None and isinstance(value, float):
            original = value / choice.factor()
        dimension = FIELD_DIMENSIONS.get(name)
        out.append({"field": name, "value": value,
                    "unit": "yr" if dimension == "age" else SI_UNIT.get(dimension or ""),
                    "column": choice.column if choice else None,
                    "original_unit": choice.unit if choice else None, "original": original})
    return out


def _worst(findings: pl.DataFrame) -> dict[str, str]:
    """The most serious severity found for each body of ``findings``."""
    df = findings.group_by("body").agg(pl.col("severity").sort_by(rank_expr()).first())
    return dict(zip(df["body"].to_list(), df["severity"].to_list(), strict=True))


def _relatives(body_id: str, parent: str | None, lf: pl.LazyFrame) -> dict[str, pl.DataFrame]:
    """The parent, siblings and children of a body, from ``lf`` (the bodies around it)."""
    have = lf.collect_schema()  # once: a schema of ~83 columns costs ~0.5 ms to build
    cols = [c for c in _SYSTEM_COLUMNS if c in have]
    related = pl.col("parent") == body_id  # children
    if parent is not None:
        related = related | (pl.col("id") == parent) | (pl.col("parent") == parent)
    found = lf.filter(related & (pl.col("id") != body_id)).select(cols).collect()  # one scan
    children = found.filter(pl.col("parent") == body_id).head(MAX_RELATIVES)
    parent_df = siblings = found.clear()
    if parent is not None:
        parent_df = found.filter(pl.col("id") == parent).head(1)
        siblings = found.filter(pl.col("parent") == parent).head(MAX_RELATIVES)
    return {"parent": parent_df, "siblings": siblings, "children": children}


def _system(parts: dict[str, pl.DataFrame], worst: dict[str, str]) -> SystemAround:
    """The body's relatives (``_relatives``) as rows, each with its worst severity."""
    rows = {key: [cast(Relative, {**r, "worst": worst.get(r["id"])}) for r in frame.to_dicts()]
            for key, frame in parts.items()}
    return {"parent": rows["parent"][0] if rows["parent"] else None,
            "siblings": rows["siblings"], "children": rows["children"]}


def body_detail(cat_dir: Path, body_id: str, mapping: Mapping[str, Any] | None,
                decisions: Sequence[Decision] = ()) -> BodyDetail:
    """Everything about one body: fields (SI and original), derived values, findings (with
    their decisions), system."""
    around = scan_bodies_around(cat_dir, [body_id])  # looked up once for the row and system
    rows = around.filter(pl.col("id") == body_id).head(100).collect()
    if rows.height == 0:
        raise NotFound(f"no body with id '{body_id}' in this catalogue")
    row = rows.row(0, named=True)
    hidden = set(CANONICAL_FIELDS) | set(ENGINE_COLUMNS) | {"_row", "_bad"}
    derived = {k: v for k, v in row.items() if k in DERIVED_COLUMNS}
    extra = {k: v for k, v in row.items()
             if k not in hidden and k not in DERIVED_COLUMNS and not k.startswith("_")}
    parts = _relatives(body_id, row.get("parent"), around)
    kin = [i for frame in parts.values() for i in frame["id"].to_list()]
    around_findings = findings_of(cat_dir, "body", [body_id, *kin]).collect()  # one look-up
    own = around_findings.lazy().filter(pl.col("body") == body_id)
    findings = (with_decisions(own, decisions, lambda: scan_bodies(cat_dir))
                .sort(rank_expr(), pl.col("margin"), descending=[False, True],
                      nulls_last=True).collect().to_dicts())
    return cast(BodyDetail, json_ready({
        "id": body_id, "row": row.get("_row"), "bad": row.get("_bad"),
        "duplicates": rows.height - 1, "fields": _field_rows(row, _choices(mapping)),
        "derived": derived, "extra": extra, "findings": findings,
        "system": _system(parts, _worst(around_findings.filter(pl.col("body").is_in(kin)))),
    }))


def coverage(cat_dir: Path) -> list[CoverageRow]:
    """The rule coverage table: which rules ran on how many bodies, and why others were skipped."""
    return cast(list[CoverageRow], json_ready(_scan(cat_dir, "coverage").collect().to_dicts()))


ARTEFACTS_SHOWN = 200  # artefacts on the overview: a 10M demo has ~10,800 (3.4 MB as JSON)


def artefacts(cat_dir: Path, offset: int = 0, limit: int | None = None) -> list[Artefact]:
    """The distribution artefacts found (cutoffs, gaps, spikes), strongest evidence first;
    ``limit`` of them from ``offset`` when given."""
    lf = _scan(cat_dir, "artefacts")
    if "p_value" in lf.collect_schema():
        lf = lf.sort("p_value", nulls_last=True, maintain_order=True)
    return cast(list[Artefact], json_ready(lf.slice(offset, limit).collect().to_dicts()))


@functools.lru_cache(maxsize=8)
def _stored_aggregates(path: str, stamp: tuple[int, int, int]) -> dict[str, Any]:
    """``aggregates.json`` parsed once per file version (``stamp``: inode, mtime, size), as
    every overview, findings and diagrams page reads it (1.7 MB at 1M bodies took 13 ms to
    parse each time); shared by the callers, which only read it."""
    return cast(dict[str, Any], json.loads(Path(path).read_text(encoding="utf-8")))


def aggregates(cat_dir: Path) -> Aggregates:
    """The precomputed binned counts for the overview and every diagram (``aggregates.json``);
    counted afresh from the catalogue's Parquet files, with the orbit settings they record, when
    an older version wrote them."""
    path = cat_dir / "aggregates.json"
    if not path.is_file():
        raise NotFound("this catalogue has no aggregates; upload it again")
    stat = path.stat()
    stored = _stored_aggregates(str(path), (stat.st_ino, stat.st_mtime_ns, stat.st_size))
    if stored.get("version") == VERSION:
        return cast(Aggregates, stored)
    recorded = stored.get("orbit_settings") or {}
    settings = OrbitSettings(**{k: v for k, v in recorded.items()
                                if k in OrbitSettings.__dataclass_fields__})
    fresh = compute_aggregates(cat_dir, settings)
    write_json_atomic(path, fresh)
    return fresh


def overview(cat_dir: Path, manifest: Mapping[str, Any]) -> Overview:
    """The catalogue's overview: summary counts, rule coverage, the strongest artefacts and
    ingest problems."""
    found = artefacts(cat_dir, limit=ARTEFACTS_SHOWN)
    total = pl.scan_parquet(cat_dir / "artefacts.parquet").select(pl.len()).collect().item()
    return {
        "catalogue": {"id": manifest.get("id"), "name": manifest.get("name"),
                      "rows": manifest.get("rows"), "created": manifest.get("created"),
                      "status": manifest.get("status")},
        "summary": manifest.get("summary") or {},
        "coverage": coverage(cat_dir),
        "artefacts": found,
        "artefacts_total": total,
    }


MAX_SYSTEM_BODIES = 2000  # bodies listed on one system's page
_SYSTEM_PAGE_COLUMNS = ("id", "name", "label", "family", "parent", "mass", "radius",
                        "semi_major_axis", "eccentricity")  # a system's page shows no others


def systems_page(cat_dir: Path, state: ViewState) -> SystemsPage:
    """One page of the systems, most serious first: ``{"total", "offset", "limit", "items"}``.

    Each item: system, bodies, primary (the heaviest parentless body), findings, a count per
    severity, the worst severity and the body that carries it. ``state.severity`` filters by
    worst. A slice of the table of systems kept beside the run (``screens.systems``).
    """
    lf = systems_table(cat_dir)
    if state.severity:
        lf = lf.filter(pl.col("worst").is_in(list(state.severity)))
    total = lf.select(pl.len()).collect().item()
    rows = lf.slice(state.offset, state.limit).drop("_rank").collect().to_dicts()
    items = [{**{k: r[k] for k in ("system", "bodies", "primary", "findings", "worst",
                                   "worst_body")},
              "counts": {s: r[s] for s in SEVERITIES}} for r in rows]
    return {"total": total, "offset": state.offset, "limit": state.limit,
            "items": json_ready(items)}


def system_detail(cat_dir: Path, system: str) -> SystemDetail:
    """A system's bodies in depth-first tree order (each with depth and child ids), capped;
    read from the partitions that hold the system only (``screens.systems``).

    Roots are bodies whose parent is blank or outside the system; bodies caught in a parent
    cycle start a tree of their own, so every body listed appears once.
    """
    bodies = scan_systems(cat_dir, [system], _SYSTEM_PAGE_COLUMNS)
    have = bodies.collect_schema()
    cols = [c for c in _SYSTEM_PAGE_COLUMNS if c in have]
    members = bodies.filter(system_key(bodies) == system)
    shown = members.select(cols).head(MAX_SYSTEM_BODIES + 1).collect()  # counted when capped
    total = shown.height if shown.height <= MAX_SYSTEM_BODIES else \
        int(members.select(pl.len()).collect().item())
    if total == 0:
        raise NotFound(f"no system '{system[:80]}' in this catalogue")
    shown = shown.head(MAX_SYSTEM_BODIES)
    found = body_findings(findings_of(cat_dir, "body", shown["id"].drop_nulls().to_list())
                          ).select("body", "findings", "_rank")
    rows = (shown.lazy().join(found, left_on="id", right_on="body", how="left")
            .with_columns(worst=name_expr("_rank"), findings=pl.col("findings").fill_null(0))
            .drop("_rank").sort(["semi_major_axis", "id"], nulls_last=True).collect())
    ordered = _tree_order(json_ready(rows.to_dicts()))
    return {"system": system, "total": total, "shown": len(ordered),
            "capped": total > MAX_SYSTEM_BODIES, "bodies": ordered}


def _tree_order(rows: list[dict[str, Any]]) -> list[TreeRow]:
    """Rows in depth-first order with ``depth`` and ``children`` (ids); no recursion."""
    ids = {r["id"] for r in rows}
    children: dict[str, list[dict[str, Any]]] = {}
    for r in rows:
        if r.get("parent") in ids and r["parent"] != r["id"]:
            children.setdefault(r["parent"], []).append(r)
    starts = [r for r in rows if r.get("parent") not in ids or r["parent"] == r["id"]] + rows
    out: list[TreeRow] = []
    seen: set[int] = set()
    for start in starts:
        stack = [(start, 0)]
        while stack:
            row, depth = stack.pop()
            if id(row) in seen:
                continue
            seen.add(id(row))
            kids = children.get(row["id"], [])
            out.append(cast(TreeRow, {**row, "depth": depth,
                                       "children": [k["id"] for k in kids]}))
            stack.extend((k, depth + 1) for k in reversed(kids))
    return out
