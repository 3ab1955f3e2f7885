"""The derived-column context every rule reads: physics per body, its parent, its inner sibling.

``derive(table, facts)`` turns the normalised table into one lazy frame with the columns listed
in DEVELOPERS.md. Inputs that are not positive are treated as absent here (``non-positive``
reports them once), so no rule downstream fires on a negative mass. What a body needs from
outside its own system (how often its id appears, its label's median and MAD, whether its chain
of parents loops) comes in ``ContextFacts``: small catalogue-wide tables, so ``derive`` can run
on one partition of whole systems at a time and give the same columns as on the whole table.
"""

from __future__ import annotations

import math
import tempfile
from dataclasses import dataclass
from pathlib import Path

import polars as pl

from bodycensus.science.physics import bodies, orbits
from bodycensus.science.rules.bands import unit_slip_hint, with_bands
from bodycensus.science.rules.graph import Chains, chain_roots, id_hash
from bodycensus.science.rules.medians import VALUE, binned_medians
from bodycensus.science.rules.ring_context import own_ring_edges, ring_columns, rings_around
from bodycensus.science.rules.tide_context import family_tides, tide_columns
from bodycensus.science.rules.uncertainty_context import mass_upper_limit, uncertainty_columns
from bodycensus.science.units import A_PRINTED, YEAR

_PARENT_COLUMNS = {
    "id": "parent",
    "mass": "parent_mass",
    "radius": "parent_radius",
    "_trusted_density": "parent_density",
    "family": "parent_family",
    "semi_major_axis": "parent_semi_major_axis",
    "_e": "parent_eccentricity",  # validated: 0 when absent, null when outside [0, 1)
    "parent": "grandparent",
    "rotation_period": "parent_rotation_period",
    "age": "parent_age",
    "_ring_inner_m": "parent_ring_inner",
    "_ring_outer_m": "parent_ring_outer",
    "_mass_error": "parent_mass_error",
}


def positive(name: str) -> pl.Expr:
    """The column where it is a positive number, else null."""
    column = pl.col(name)
    return pl.when(column > 0).then(column)


def _body_columns(table: pl.LazyFrame) -> pl.LazyFrame:
    """Per-body physics that needs no other row."""
    mass, radius = positive("mass"), positive("radius")
    a = positive("semi_major_axis")
    e = pl.when((pl.col("eccentricity") >= 0) & (pl.col("eccentricity") < 1)).then(
        pl.col("eccentricity")).otherwise(pl.when(pl.col("eccentricity").is_null()).then(0.0))
    inclined = pl.col("inclination") > math.pi / 2.0  # radians: beyond 90 degrees
    if A_PRINTED not in table.collect_schema():  # a table not read from text (tests, engines)
        table = table.with_columns(pl.lit(None, dtype=pl.Float64).alias(A_PRINTED))
    return own_ring_edges(table.with_columns(
        *uncertainty_columns(),
        # an upper limit of the mass gives only an upper limit of the density: none is judged
        density=pl.when(~mass_upper_limit()).then(bodies.bulk_density(mass, radius)),
        gravity=bodies.surface_gravity(mass, radius),
        gravity_g0=bodies.surface_gravity_g0(mass, radius),
        escape_speed=bodies.escape_speed(mass, radius),
        periapsis=orbits.periapsis(a, e),
        apoapsis=orbits.apoapsis(a, e),
        _a=a,
        _e=e,
        _mass=mass,
        _radius=radius,
        _retrograde=pl.coalesce("retrograde", inclined).fill_null(False),
    ))


def _positions(keys: pl.Series, rows: pl.DataFrame) -> pl.Series:
    """Where (row position) each key's first row of ``rows`` (id, _at) is; null where none."""
    return keys.to_frame("id").join(rows, on="id", how="left", maintain_order="left")["_at"]


def _with_parent(table: pl.DataFrame) -> pl.DataFrame:
    """Each body's parent (first row of that id) and grandparent mass beside it. The positions
    of the parents come from a join of the narrow id columns and the parent columns are then
    gathered by position: joining the wide rows on the ids' text gathered every column again
    and, lazily, computed the body columns once more for each side of the join."""
    first = (table.select("id").with_row_index("_at").filter(pl.col("id").is_not_null())
             .unique(subset="id", keep="first"))
    parents = table.select(
        *[pl.col(src).alias(dst) for src, dst in _PARENT_COLUMNS.items() if src != "mass"],
        pl.col("_mass").alias("parent_mass"),
        pl.lit(True).alias("_parent_exists"),
    ).with_columns(
        positive("parent_semi_major_axis").alias("parent_semi_major_axis"),
        positive("parent_radius").alias("parent_radius"),
    )
    beside = parents.select(pl.all().gather(_positions(table["parent"], first)))
    grandparent_mass = parents["parent_mass"].gather(_positions(beside["grandparent"], first))
    return table.hstack([*beside.drop("parent"), grandparent_mass.alias("grandparent_mass")])


def _derived_orbits(table: pl.LazyFrame) -> pl.LazyFrame:
    """Incomplete is not broken: a body with a period and a parent of known mass but no
    semi-major axis gets one from Kepler's third law (its periapsis and apoapsis too), so the
    orbit rules judge it; ``orbit_derived`` names what was derived ("semi_major_axis", or
    "period" where the period is missing and ``kepler_period`` stands for it)."""
    period, parent_mass = positive("period"), pl.col("parent_mass")
    derived = orbits.kepler_semi_major_axis(period, parent_mass, pl.col("_mass").fill_null(0.0))
    derive_a = (pl.col("_a").is_null() & derived.is_not_null()
                & pl.col("_parent_exists")).fill_null(False)
    a = pl.when(derive_a).then(derived).otherwise(pl.col("_a"))
    return table.with_columns(
        _a=a,
        periapsis=pl.when(derive_a).then(orbits.periapsis(a, pl.col("_e")))
        .otherwise(pl.col("periapsis")),
        apoapsis=pl.when(derive_a).then(orbits.apoapsis(a, pl.col("_e")))
        .otherwise(pl.col("apoapsis")),
        orbit_derived=pl.when(derive_a).then(pl.lit("semi_major_axis")).when(
            period.is_null() & pl.col("_a").is_not_null() & parent_mass.is_not_null())
        .then(pl.lit("period")),
    )


def _orbit_columns(table: pl.LazyFrame) -> pl.LazyFrame:
    """Roche limits, Hill spheres, Kepler periods and the rest, for bodies with a parent; then
    tides, rings and the ring around each moon."""
    rigidity, quality = family_tides(pl.col("family"))
    a, e, mass, radius = pl.col("_a"), pl.col("_e"), pl.col("_mass"), pl.col("_radius")
    density = pl.col("_trusted_density")
    parent_mass, parent_radius = pl.col("parent_mass"), pl.col("parent_radius")
    parent_hill = orbits.hill_radius(pl.col("parent_semi_major_axis"),
                                     pl.col("parent_eccentricity"), parent_mass,
                                     pl.col("grandparent_mass"))
    kepler = orbits.kepler_period(a, parent_mass, mass.fill_null(0.0))
    stable = pl.when(pl.col("_retrograde")).then(
        orbits.stable_hill_fraction(pl.col("parent_eccentricity"), e, retrograde=True)).otherwise(
        orbits.stable_hill_fraction(pl.col("parent_eccentricity"), e))
    return rings_around(ring_columns(tide_columns(table.with_columns(
        roche_rigid=orbits.roche_rigid(parent_radius, pl.col("parent_density"), density),
        roche_fluid=orbits.roche_fluid(parent_radius, pl.col("parent_density"), density),
        hill_radius=orbits.hill_radius(a, e, mass, parent_mass),
        parent_hill_radius=parent_hill,
        stable_hill_limit=stable * parent_hill,
        kepler_period=kepler,
        # a semi-major axis derived from the period agrees with it by construction
        period_ratio=pl.when(pl.col("orbit_derived").fill_null("") != "semi_major_axis")
        .then(positive("period") / kepler),
        barycentre_offset=orbits.barycentre_offset(a, parent_mass, mass),
        tidal_lock_time=orbits.tidal_lock_time(a, mass, radius, parent_mass, rigidity, quality)
        / YEAR,
        roche_x=(pl.col("parent_density") / density) ** (1.0 / 3.0),
        roche_y=pl.col("periapsis") / parent_radius,
        hill_ratio=pl.col("apoapsis") / parent_hill,
    ))))


def _sibling_columns(table: pl.DataFrame) -> pl.DataFrame:
    """The next body inward around the same parent (siblings ordered by semi-major axis, ties in
    file order); none for a body without a parent (those are no siblings of each other). One
    sort of the few columns it reads, then the row before within the same parent: five windows
    ``over("parent", order_by=...)`` took 5x as long."""
    inner = {"id": "inner_id", "_a": "inner_a", "_mass": "inner_mass", "apoapsis": "inner_apoapsis",
             "period": "inner_period"}
    same_parent = (pl.col("parent") == pl.col("parent").shift(1)).fill_null(False)
    ranked = (table.select("parent", "_row", *inner).with_row_index("_at")
              .sort("parent", "_a", "_row")
              .select("_at", *[pl.when(same_parent).then(pl.col(src).shift(1)).alias(dst)
                               for src, dst in inner.items()]))
    return table.hstack(ranked.sort("_at").drop("_at").get_columns())


def _trusted(table: pl.LazyFrame) -> pl.LazyFrame:
    """Flag a density that looks like a unit slip; orbit physics must not build on it."""
    table = table.with_columns(unit_slip_hint(pl.col("density")).alias("_slip_hint"))
    return table.with_columns(
        pl.when(pl.col("_slip_hint").is_null()).then(pl.col("density")).alias("_trusted_density"))


MAD_TO_SIGMA = 0.6745  # the MAD of a normal distribution is 0.6745 sigma (Iglewicz & Hoaglin 1993)
OUTLIER_SCORES = {"_z_density": "density", "_z_mass": "_mass", "_z_radius": "_radius"}


@dataclass(frozen=True)
class ContextFacts:
    """What one body's derived columns need from the whole catalogue, as small tables.

    ``duplicate_ids``: id, _id_count for ids on more than one row. ``label_statistics``: per
    label (null included) its row count ``_label_size`` and, per outlier score, the median and
    MAD of the score's value (``{score}_median``, ``{score}_mad``). ``cycle_ids``: ids whose
    chain of parents never reaches a root (``graph.chain_roots``)."""

    duplicate_ids: pl.DataFrame
    label_statistics: pl.DataFrame
    cycle_ids: pl.Series


def _band_position() -> pl.Expr:
    """log10 of a density over its family's high band edge at the body's mass: the edges follow
    the composition curve of each family (the main sequence for stars, iron for rocks, cold H/He
    for giants), so a label of many masses (M dwarfs and F stars among one label's hosts) scores
    each body against its own mass, not against the label's median density."""
    return (pl.col("density") / pl.col("_band_high")).log10()


_BANDED = pl.col("_band_low").is_not_null()


def _score_values() -> dict[str, pl.Expr]:
    """The value each outlier score measures: where the family has a density band, the density
    against the band's edge at its mass; elsewhere log10 of the density; log10 of mass and
    radius (scored only where there is no band: the band ties them together)."""
    density = pl.when(_BANDED).then(_band_position()).otherwise(pl.col("density").log10())
    return {"_z_density": density, "_z_mass": pl.col("_mass").log10(),
            "_z_radius": pl.col("_radius").log10()}


def _scored(table: pl.LazyFrame) -> pl.LazyFrame:
    """Each score's value per row with its label's code (from ``_body_columns`` and the bands,
    so the facts pass and ``derive`` score the same numbers)."""
    values = _score_values()
    return with_bands(_body_columns(table)).select(
        "_code", *[values[score].alias(score) for score in OUTLIER_SCORES])


def label_statistics(table: pl.LazyFrame) -> pl.DataFrame:
    """Per label: its size, and the median and MAD of each score's value, exact, from streaming
    passes of binned counts (``medians``: memory follows the labels and the few values near
    each median, not the catalogue). The scores (a label's 4-byte code and three floats a body)
    are written once to a temporary file that the four passes read."""
    labels = (table.group_by("label").agg(pl.len().cast(pl.UInt32).alias("_label_size"))
              .collect(engine="streaming").sort("label").with_row_index("_code"))
    # a join on the small label table streams; replace_strict held the whole column
    coded = table.join(labels.lazy(), on="label", how="left", nulls_equal=True)
    keys = ["_code", "_score"]
    with tempfile.TemporaryDirectory(prefix="bodycensus-scores-") as folder:
        scored = Path(folder) / "scores.parquet"
        # common-subexpression elimination made this pass 4x slower (polars 2.1, 10M bodies)
        _scored(coded).sink_parquet(scored, optimizations=pl.QueryOptFlags(comm_subexpr_elim=False))

        def scores() -> pl.LazyFrame:
            return pl.concat([pl.scan_parquet(scored).select(
                "_code", pl.lit(i, pl.UInt8).alias("_score"), pl.col(score).alias(VALUE))
                for i, score in enumerate(OUTLIER_SCORES)])

        medians = binned_medians(scores, keys)

        def deviations() -> pl.LazyFrame:
            return scores().join(medians.lazy(), on=keys).select(
                *keys, (pl.col(VALUE) - pl.col("median")).abs().alias(VALUE))

        mads = binned_medians(deviations, keys).rename({"median": "mad"})
    both = medians.join(mads, on=keys, how="left")
    per_label = labels

    for i, score in enumerate(OUTLIER_SCORES):
        mine = both.filter(pl.col("_score") == i).select(
            "_code", pl.col("median").alias(f"{score}_median"), pl.col("mad").alias(f"{score}_mad"))
        per_label = per_label.join(mine, on="_code", how="left")
    return per_label.select("label", "_label_size", *[f"{score}_{what}" for score in
                                                      OUTLIER_SCORES for what in ("median", "mad")])


def duplicate_ids(table: pl.LazyFrame, repeated: pl.Series) -> pl.DataFrame:
    """Ids that appear on more than one row, with their row counts. ``repeated``: the hashes
    of ids on more than one row (``Chains.repeated``, from one sort of 8 bytes a body instead
    of the ids' text); only those rows' ids are counted by their text, so two ids that merely
    share a hash are not reported."""
    return (table.filter(pl.col("id").is_not_null() & id_hash("id").is_in(repeated.implode()))
            .group_by("id").agg(pl.len().cast(pl.UInt32).alias("_id_count"))
            .filter(pl.col("_id_count") > 1).collect(engine="streaming"))


def context_facts(table: pl.LazyFrame, chains: Chains | None = None) -> ContextFacts:
    """Every catalogue-wide fact of ``table`` (its chains of parents from ``graph`` when not
    given), one after the other so their peaks of memory do not add up."""
    chains = chain_roots(table) if chains is None else chains
    return ContextFacts(duplicate_ids(table, chains.repeated), label_statistics(table),
                        chains.cycle_ids)


def _robust_z(score: str, value: pl.Expr) -> pl.Expr:
    """|0.6745 (x - median) / MAD| of a score's value, against its label's median and MAD."""
    return (MAD_TO_SIGMA * (value - pl.col(f"{score}_median")) / pl.col(f"{score}_mad")).abs()


def _label_statistics(table: pl.LazyFrame, statistics: pl.DataFrame) -> pl.LazyFrame:
    """Robust z-scores within each label, against the whole catalogue's label statistics: the
    density everywhere, mass and radius where the family has no density band."""
    joined = table.join(statistics.lazy(), on="label", how="left", nulls_equal=True,
                        maintain_order="left")
    values = _score_values()
    working = [f"{score}_{what}" for score in OUTLIER_SCORES for what in ("median", "mad")]
    return joined.with_columns(
        _robust_z("_z_density", values["_z_density"]).alias("_z_density"),
        *[pl.when(~_BANDED).then(_robust_z(score, values[score])).alias(score)
          for score in OUTLIER_SCORES if score != "_z_density"],
    ).drop(working)


def _ids(ids: pl.Series) -> pl.Series:
    """Ids as a one-element list series, the form ``is_in`` takes for a set of values."""
    return ids.cast(pl.String).implode()


def _id_counts(table: pl.LazyFrame, duplicates: pl.DataFrame) -> pl.LazyFrame:
    """``_id_count``: rows carrying the body's id in the whole catalogue (0 without an id)."""
    joined = table.join(duplicates.lazy().rename({"_id_count": "_dup"}), on="id", how="left",
                        maintain_order="left")
    count = pl.when(pl.col("id").is_null()).then(pl.lit(0, pl.UInt32)).otherwise(
        pl.col("_dup").fill_null(1))
    return joined.with_columns(count.cast(pl.UInt32).alias("_id_count")).drop("_dup")


def derive(table: pl.LazyFrame, facts: ContextFacts | None = None) -> pl.LazyFrame:
    """The normalised table plus every derived column the rules and diagrams use, in the
    table's row order. ``facts`` are the whole catalogue's (``context_facts``); without them,
    ``table`` is the catalogue. Computed in memory, stage by stage: ``table`` is one partition
    of whole systems (``engines.partition``) or a small table."""
    facts = facts if facts is not None else context_facts(table)
    table = _id_counts(table, facts.duplicate_ids).with_columns(
        pl.col("id").is_in(_ids(facts.cycle_ids)).alias("_in_cycle"))
    # each composition curve once (``with_bands``): the bands' when-chain took 0.26-0.35 s of
    # CPU of a partition of 125,000 demo bodies, the curves once 0.18-0.19, same numbers
    with_body = _label_statistics(_trusted(with_bands(_body_columns(table))),
                                  facts.label_statistics)
    # one partition (or a small table) in memory: each stage is computed once, in row order
    with_parent = _with_parent(with_body.collect(engine="in-memory"))
    orbits = _orbit_columns(_derived_orbits(with_parent.lazy())).collect(engine="in-memory")
    return _sibling_columns(orbits).lazy()


# Working columns the rules read that are neither catalogue fields nor derived quantities to show
# (underscore-prefixed ones are working columns too).
ENGINE_COLUMNS: tuple[str, ...] = (
    "grandparent", "grandparent_mass", "parent_semi_major_axis", "parent_eccentricity",
    "inner_id", "inner_a", "inner_mass", "inner_apoapsis", "inner_period", "parent_rotation_period",
    "parent_age", "parent_ring_inner", "parent_ring_outer", "parent_mass_error",
)

DERIVED_COLUMNS: tuple[str, ...] = (
    "density", "gravity", "gravity_g0", "escape_speed", "periapsis", "apoapsis", "parent_mass",
    "parent_radius", "parent_density", "parent_family", "roche_rigid", "roche_fluid",
    "hill_radius", "parent_hill_radius", "stable_hill_limit", "kepler_period", "period_ratio",
    "barycentre_offset", "tidal_lock_time", "roche_x", "roche_y", "hill_ratio",
    "tidal_heating", "tidal_heat_flux", "roche_distance", "tidal_decay_time", "life_to_age",
    "ring_inner_edge", "ring_outer_edge", "ring_planet_radius", "ring_roche_rigid",
    "ring_roche_fluid", "ring_implied_density", "ring_roche_x", "ring_roche_y", "ring_around",
    "orbit_derived",
)
