"""The Systems list and one system's bodies from what a run keeps beside its files: a table of
every system (``systems.parquet``: bodies, primary, findings per severity, the worst and the body
that carries it) stored in the list's order, and an index from each system to the partition files
holding its bodies (``system_index.parquet``, sorted by system in small row groups). Both are
written after a run (or on the first request to an older one), so a page of the list reads a
slice of the small table and a system's page reads only its own partitions, never every body.

The table is counted a slice of a bodies file at a time and the partial counts merged one range
of system names at a time (a system may span partitions when its ``system`` cells and its chains
of parents disagree), so memory follows a slice and a range, not the catalogue.
"""

from __future__ import annotations

import contextlib
from collections.abc import Sequence
from pathlib import Path

import polars as pl

from bodycensus.science.severity import SEVERITIES, name_expr, rank_expr
from bodycensus.storage.runs import (
    bodies_files,
    bodies_of_systems,
    in_system_order,
    scan_bodies,
    scan_findings,
    scan_parts,
)
from bodycensus.storage.sorted_index import rows_with
from bodycensus.storage.sorted_spill import SAMPLE, AppendingWriter, RangeSpill, range_bounds

SYSTEMS = "systems.parquet"
SYSTEM_INDEX = "system_index.parquet"
VERSION = "1"  # in the table's metadata: a table of another version is counted again
ROW_GROUP = 4096  # systems per row group: a page of 50 decodes one or two
BUCKET_BODIES = 1_000_000  # bodies whose per-system counts are merged in memory at a time
BATCH = 250_000  # bodies counted per system at a time (a file's rows in slices)
NO_SYSTEM = "(no system)"  # the group of bodies whose system is blank
_LIST_ORDER = (["_rank", "findings", "system"], [False, True, False])  # worst, most, by name
_BEST_PRIMARY = (["primary_mass", "primary"], [True, False])  # heaviest, then by id
_WORST_BODY = (["worst_rank", "worst_findings"], [False, True])  # worst, then most findings


def system_key(lf: pl.LazyFrame) -> pl.Expr:
    """The system of each body, blanks (or a catalogue without the column) as NO_SYSTEM."""
    column = pl.col("system") if "system" in lf.collect_schema() else pl.lit(None, pl.String)
    return column.fill_null(NO_SYSTEM).alias("system")


def body_findings(findings: pl.LazyFrame) -> pl.LazyFrame:
    """Per body: number of findings, the rank of its worst, and a count per severity."""
    return (findings.with_columns(_rank=rank_expr()).group_by("body")
            .agg(pl.len().alias("findings"), pl.col("_rank").min(),
                 *[(pl.col("severity") == s).sum().alias(s) for s in SEVERITIES]))


def _first(column: str, order: tuple[list[str], list[bool]]) -> pl.Expr:
    """The first value of ``column`` in the group, in ``order`` (nulls last; ties by row)."""
    keys, descending = order
    return pl.col(column).sort_by(keys, descending=descending, nulls_last=True,
                                  maintain_order=True).first()


def _partial(bodies: pl.LazyFrame, per_body: pl.LazyFrame) -> pl.LazyFrame:
    """One file's bodies counted per system, with the candidates for its primary (the
    heaviest parentless body) and its worst body, each with what ranks it."""
    top = pl.col("parent").is_null()
    return (bodies.select("id", "parent", "mass", system_key(bodies))
            .join(per_body, left_on="id", right_on="body", how="left", maintain_order="left")
            .with_columns(primary=pl.when(top).then(pl.col("id")),
                          primary_mass=pl.when(top).then(pl.col("mass")),
                          worst_rank=pl.col("_rank"), worst_findings=pl.col("findings"))
            .group_by("system", maintain_order=True)
            .agg(pl.len().alias("bodies"),
                 *[_first(c, _BEST_PRIMARY) for c in ("primary", "primary_mass")],
                 pl.col("findings").sum(), *[pl.col(s).sum() for s in SEVERITIES],
                 pl.col("_rank").min(),
                 *[_first(c, _WORST_BODY) for c in ("id", "worst_rank", "worst_findings")])
            .rename({"id": "worst_body"}))


def _merged(partials: pl.LazyFrame) -> pl.LazyFrame:
    """The partial counts of every file merged per system, in the list's order."""
    keys, descending = _LIST_ORDER
    return (partials.group_by("system", maintain_order=True)
            .agg(pl.col("bodies").sum(), _first("primary", _BEST_PRIMARY),
                 pl.col("findings").sum(), *[pl.col(s).sum() for s in SEVERITIES],
                 pl.col("_rank").min(), _first("worst_body", _WORST_BODY))
            .with_columns(worst=name_expr("_rank"))
            .with_columns(pl.when(pl.col("worst").is_null()).then(None)
                          .otherwise(pl.col("worst_body")).alias("worst_body"))
            .sort(keys, descending=descending, nulls_last=True, maintain_order=True)
            .select("system", "bodies", "primary", "findings", *SEVERITIES, "_rank", "worst",
                    "worst_body"))


def write_systems(folder: Path, bucket_bodies: int = BUCKET_BODIES, batch: int = BATCH) -> Path:
    """Write ``systems.parquet`` (and, for a partitioned run, ``system_index.parquet``) into a
    checked run's folder in bounded memory (temporary names, fsync, rename): ``batch`` bodies
    at a time are counted per system and spilled by ranges of system names holding about
    ``bucket_bodies`` bodies; each range's counts are merged alone. The systems with findings
    (as few as the findings) are sorted together and written first; the rest follow in name
    order, range after range, which is the list's order for them."""
    per_body = body_findings(scan_findings(folder)).collect().lazy()
    bodies = scan_bodies(folder)
    sample = bodies.gather_every(SAMPLE).select(system_key(bodies)).collect()["system"]
    rows = int(bodies.select(pl.len()).collect().item())
    bounds = range_bounds(sample, rows, bucket_bodies)
    none = _merged(_partial(bodies.head(0), per_body)).collect()  # the table's columns
    partitioned = (folder / "bodies").is_dir()
    with RangeSpill(folder / SYSTEMS, "system", bounds) as spill:
        for path in bodies_files(folder):
            file = pl.scan_parquet(path)
            for start in range(0, int(file.select(pl.len()).collect().item()), batch):
                spill.add(_partial(file.slice(start, batch), per_body)
                          .with_columns(part=pl.lit(path.name)).collect())
        with contextlib.ExitStack() as stack:
            index = (stack.enter_context(AppendingWriter(
                folder / SYSTEM_INDEX, pl.Schema({"system": pl.String, "part": pl.String}),
                ROW_GROUP)) if partitioned else None)
            worst: list[pl.DataFrame] = [none]
            for bucket in spill.buckets():
                if index is not None:
                    index.write(bucket.select("system", "part").unique().sort("system", "part"))
                merged = _merged(bucket.lazy().drop("part")).collect()
                quiet = pl.col("_rank").is_null() & (pl.col("findings") == 0)
                worst.append(merged.filter(~quiet))
                spill.put_aside(merged.filter(quiet))
        keys, descending = _LIST_ORDER
        with AppendingWriter(folder / SYSTEMS, none.schema, ROW_GROUP,
                             {"bodycensus.systems": VERSION}) as table:
            table.write(pl.concat(worst, how="vertical_relaxed")
                        .sort(keys, descending=descending, nulls_last=True, maintain_order=True))
            for quiet_rows in spill.aside():
                table.write(quiet_rows)
    return table.dest


def systems_table(folder: Path) -> pl.LazyFrame:
    """Every system of the run in the list's order (lazy), written first when missing or of
    another version."""
    path = folder / SYSTEMS
    if not path.is_file() or pl.read_parquet_metadata(path).get("bodycensus.systems") != VERSION:
        write_systems(folder)
    return pl.scan_parquet(path)


def scan_systems(folder: Path, systems: list[str], columns: Sequence[str] | None = None
                 ) -> pl.LazyFrame:
    """Bodies of the partition files that hold ``systems`` (lazy, unfiltered: the caller
    keeps the systems' own bodies; ``columns`` of them, with ``system``, or all), through the
    system index where the run has one: of a file stored in system order, only the row groups
    whose range can hold them (blank systems, ``NO_SYSTEM``, are looked for in every row)."""
    read = None if columns is None else list(dict.fromkeys(["system", *columns]))
    index = folder / SYSTEM_INDEX
    if not (folder / "bodies").is_dir():
        return _columns(scan_bodies(folder), read)
    if not index.is_file():
        systems_table(folder)
    parts = rows_with(index, "system", systems, ["system", "part"])["part"].unique(
        maintain_order=True).sort().to_list()
    paths = [folder / "bodies" / str(part) for part in parts]
    if NO_SYSTEM in systems or not all(in_system_order(path) for path in paths):
        return _columns(scan_parts(folder, parts), read)
    frames = [bodies_of_systems(path, systems, read).lazy() for path in paths]
    return pl.concat(frames, how="vertical") if frames else \
        _columns(scan_parts(folder, []), read)


def _columns(lf: pl.LazyFrame, columns: list[str] | None) -> pl.LazyFrame:
    """``columns`` of ``lf`` that it has (all when None)."""
    if columns is None:
        return lf
    have = lf.collect_schema()
    return lf.select([c for c in columns if c in have])
