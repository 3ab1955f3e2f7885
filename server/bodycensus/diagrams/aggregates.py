"""Binned counts for every dashboard diagram, computed lazily from the engine's Parquet files.

The browser never receives raw rows: each diagram gets counts on fixed bins (log10 where a
quantity spans decades) plus at most ``FLAGGED_CAP`` flagged bodies to draw on top, the most
severe and then the largest margin first. The result is plain JSON-ready Python (no NaN).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import polars as pl

from bodycensus.diagrams import binning
from bodycensus.science.families import FAMILY_PARAMETERS, DensityBand
from bodycensus.science.physics import bodies as phys
from bodycensus.science.physics.orbits import (
    FLUID_ROCHE_COEFFICIENT,
    RIGID_ROCHE_COEFFICIENT,
    stable_hill_fraction,
)
from bodycensus.science.rules.bands import curve_density
from bodycensus.science.rules.orbit import OrbitSettings
from bodycensus.science.units import M_EARTH, M_SUN, R_EARTH

SEVERITIES: tuple[str, ...] = ("error", "impossible", "unstable", "suspect", "note")
SEVERITY_RANK: dict[str, int] = {s: i for i, s in enumerate(SEVERITIES)}
BINS, BINS_2D, FLAGGED_CAP, LABEL_CAP = 60, 70, 2000, 40
BAND_REACH = 2.0  # decades of density beyond a label's data that its histogram may show

_BODY_RULES = ("denser-than-iron", "family-density", "oversized-cold-body", "over-chandrasekhar",
               "over-neutron-star-max", "under-hydrogen-burning", "brown-dwarf-range",
               "label-outlier")
# Which findings each diagram draws on top (rule ids of the rule registry).
DIAGRAM_RULES: dict[str, tuple[str, ...]] = {
    "density": _BODY_RULES,
    "mass_radius": _BODY_RULES,
    "roche": ("periapsis-inside-parent", "inside-rigid-roche", "inside-fluid-roche"),
    "hill": ("outside-hill-sphere", "beyond-stable-hill"),
    "kepler": ("kepler-mismatch",),
}


@dataclass(frozen=True)
class Axis:
    """One diagram coordinate: a column divided by ``scale`` less ``offset``, on log10 when
    ``log``; with a ``window``, the axis spans just it and values beyond sit at its ends."""

    column: str
    scale: float = 1.0
    log: bool = True
    offset: float = 0.0
    window: tuple[float, float] | None = None

    def expr(self) -> pl.Expr:
        """The coordinate as a polars expression (null where it is undefined)."""
        value = pl.col(self.column) / self.scale - self.offset
        coordinate = binning.log10_positive(value) if self.log else binning.finite(value)
        return coordinate.clip(*self.window) if self.window else coordinate

    def range_exprs(self, name: str) -> list[pl.Expr]:
        """Min and max of the column's usable raw values (cheaper than of the coordinate)."""
        if self.window and not self.log:
            low, high = ((end + self.offset) * self.scale for end in self.window)
            return [pl.lit(low).alias(f"{name}__lo"), pl.lit(high).alias(f"{name}__hi")]
        col = pl.col(self.column)
        usable = col.is_finite() & (col > 0) if self.log else col.is_finite()
        return binning.range_exprs(name, col.filter(usable))

    def coordinate(self, raw: float | None) -> float | None:
        """A raw value (e.g. a range end from ``range_exprs``) on this axis."""
        if raw is None:
            return None
        return math.log10(raw / self.scale) if self.log else raw / self.scale - self.offset


KEPLER_WINDOW = (-10.0, 10.0)  # per cent
DIAGRAM_AXES: dict[str, tuple[Axis, ...]] = {
    "density": (Axis("density"),),
    "mass_radius": (Axis("mass", M_EARTH), Axis("radius", R_EARTH)),
    "roche": (Axis("roche_x"), Axis("roche_y")),
    "hill": (Axis("hill_ratio"),),
    # Kepler residual in per cent, (P / P_Kepler - 1) x 100, in a +-10 % window: clean periods
    # agree to a fraction of a per cent, so a log axis spanning the outliers shows one spike.
    "kepler": (Axis("period_ratio", scale=0.01, log=False, offset=100.0, window=KEPLER_WINDOW),),
}
# Numeric fields offered in the distributions diagram, with their SI unit; linear ones listed.
DISTRIBUTION_FIELDS: dict[str, str] = {
    "mass": "kg", "radius": "m", "semi_major_axis": "m", "eccentricity": "1", "period": "s",
    "rotation_period": "s", "age": "years", "temperature": "K", "luminosity": "W",
    "density": "kg/m3", "gravity": "m/s2", "escape_speed": "m/s",
}
LINEAR_FIELDS = frozenset({"eccentricity", "age"})

# Mass-radius curves (name, radius function, valid mass range in kg): the Seager et al. 2007
# fits are published up to ~20 M_earth; the cold H/He curve spans giant planets to brown dwarfs.
_MR_CURVES = (
    ("iron", lambda m: phys.composition_radius(m, "iron"), (1e-6 * M_EARTH, 20 * M_EARTH)),
    ("rock", lambda m: phys.composition_radius(m, "rock"), (1e-6 * M_EARTH, 20 * M_EARTH)),
    ("water ice", lambda m: phys.composition_radius(m, "water_ice"),
     (1e-6 * M_EARTH, 20 * M_EARTH)),
    ("cold H/He", phys.cold_hhe_radius, (10 * M_EARTH, 0.08 * M_SUN)),
)


def distribution_axis(field: str) -> Axis:
    """The binning axis of a field in the distributions diagram (log10 unless linear)."""
    return Axis(field, log=field not in LINEAR_FIELDS)


def band_density(band: DensityBand, mass: float | None) -> tuple[float, float] | None:
    """The (low, high) plausible density (kg m-3) of a family band at ``mass``; None if unknown."""
    ends = []
    for curve, factor in ((band.low_curve, band.low_factor), (band.high_curve, band.high_factor)):
        if curve == "const":
            ends.append(factor)
        elif mass is None or not mass > 0:
            return None
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                ends.append(factor * float(curve_density(curve, mass)))
    if not all(math.isfinite(end) for end in ends):
        return None  # a curve past its validity (e.g. a white dwarf beyond 1.454 M_sun)
    return ends[0], ends[1]


def compute_aggregates(workdir: Path) -> dict[str, Any]:
    """All diagram and overview aggregates of the engine's output in ``workdir``."""
    bodies = pl.scan_parquet(workdir / "bodies.parquet")
    findings = _scan_optional(workdir / "findings.parquet")
    columns = set(bodies.collect_schema().names())
    axes = _present_axes(columns)
    fields = _distribution_fields(columns, workdir / "artefacts.parquet")
    labels_df, ranges = _labels_and_ranges(bodies, axes, fields)
    top = labels_df.head(LABEL_CAP)["label"].drop_nulls().to_list()
    out: dict[str, Any] = {"rows": int(labels_df["count"].sum()), **_counts(labels_df, findings)}
    out.update(_diagrams(bodies, findings, axes, ranges, top, labels_df))
    out["distributions"] = _distributions(bodies, fields, ranges, top, workdir)
    out["coverage"] = _records(_read_optional(workdir / "coverage.parquet"))
    return out


def _scan_optional(path: Path) -> pl.LazyFrame | None:
    return pl.scan_parquet(path) if path.exists() else None


def _read_optional(path: Path) -> pl.DataFrame | None:
    return pl.read_parquet(path) if path.exists() else None


def _present_axes(columns: set[str]) -> dict[str, tuple[Axis, ...]]:
    """The diagrams whose columns all exist in the bodies table."""
    return {name: axes for name, axes in DIAGRAM_AXES.items()
            if all(axis.column in columns for axis in axes)}


def _distribution_fields(columns: set[str], artefacts_path: Path) -> list[str]:
    """Numeric fields for the distributions diagram, plus any field an artefact was found in."""
    fields = [f for f in DISTRIBUTION_FIELDS if f in columns]
    artefacts = _read_optional(artefacts_path)
    if artefacts is not None and artefacts.height:
        fields += [f for f in artefacts["field"].unique().sort().to_list()
                   if f in columns and f not in fields]
    return fields


def _labels_and_ranges(bodies: pl.LazyFrame, axes: dict[str, tuple[Axis, ...]],
                       fields: list[str]) -> tuple[pl.DataFrame, dict[str, tuple[Any, Any]]]:
    """Count per label (with its main family and median mass) and every axis range, one pass."""
    mass = binning.finite(pl.col("mass"))
    named = {f"{name}{i}": axis for name, group in axes.items() for i, axis in enumerate(group)}
    named.update({f: distribution_axis(f) for f in fields})
    per_label = [pl.len().alias("count"), mass.median().alias("median_mass")]
    if "density" in axes:  # each label's density histogram gets bins of its own
        per_label += axes["density"][0].range_exprs("density")
    plans = [bodies.group_by("label").agg(per_label),
             bodies.group_by("label", "family").agg(pl.len().alias("n")),
             bodies.select([e for key, axis in named.items() for e in axis.range_exprs(key)])]
    counts, pairs, ranges_df = pl.collect_all(plans)
    main_family = (pairs.sort(["n", "family"], descending=[True, False], nulls_last=True)
                   .unique("label", keep="first").select("label", "family"))
    labels_df = (counts.join(main_family, on="label", how="left", nulls_equal=True)
                 .select("label", "count", "family", pl.exclude("label", "count", "family"))
                 .sort(["count", "label"], descending=[True, False], nulls_last=True))
    row = ranges_df.row(0, named=True)
    return labels_df, {key: (axis.coordinate(row[f"{key}__lo"]), axis.coordinate(row[f"{key}__hi"]))
                       for key, axis in named.items()}


def _counts(labels_df: pl.DataFrame, findings: pl.LazyFrame | None) -> dict[str, Any]:
    """Counts by label, family, severity and rule."""
    families = labels_df.group_by("family").agg(pl.col("count").sum()).sort(
        ["count", "family"], descending=[True, False])
    out: dict[str, Any] = {
        "labels": _records(labels_df.select("label", "family", "count")),
        "families": _records(families),
    }
    if findings is None:
        out["severity"] = [{"severity": s, "count": 0, "bodies": 0} for s in SEVERITIES]
        out["rules"] = []
        return out
    by_sev, by_rule = pl.collect_all([
        findings.group_by("severity").agg(pl.len().alias("count"),
                                         pl.col("body").n_unique().alias("bodies")),
        findings.group_by("rule", "severity").agg(pl.len().alias("count")),
    ])
    sev = {r["severity"]: r for r in by_sev.iter_rows(named=True)}
    out["severity"] = [{"severity": s, "count": sev.get(s, {}).get("count", 0),
                        "bodies": sev.get(s, {}).get("bodies", 0)} for s in SEVERITIES]
    rules = sorted(by_rule.iter_rows(named=True),
                   key=lambda r: (SEVERITY_RANK.get(r["severity"], 9), -r["count"], r["rule"]))
    out["rules"] = rules
    return out


def _diagrams(bodies: pl.LazyFrame, findings: pl.LazyFrame | None,
              axes: dict[str, tuple[Axis, ...]], ranges: dict[str, tuple[Any, Any]],
              top: list[str], labels_df: pl.DataFrame) -> dict[str, Any]:
    """Histograms and flagged bodies of the density, mass-radius, Roche and orbit diagrams."""
    edges = {name: [binning.edges(*_with_references(f"{name}{i}", ranges),
                                  BINS_2D if len(group) == 2 else BINS)
                    for i in range(len(group))] for name, group in axes.items()}
    names = [n for n in axes if all(edges[n])]
    if "density" in names:
        edges["density"] = [density_edges(labels_df, top)]
    plans = [_diagram_plan(bodies, n, axes[n], edges[n], top) for n in names]
    flagged_plans = [_flagged_plan(findings, bodies, n, axes[n]) for n in names
                     if findings is not None]
    results = pl.collect_all(plans + flagged_plans)
    out: dict[str, Any] = {n: None for n in DIAGRAM_AXES}
    for i, name in enumerate(names):
        flagged = _records(results[len(names) + i]) if findings is not None else []
        out[name] = _diagram_result(name, edges[name], results[i], flagged, labels_df, top)
    return out


def _with_references(key: str, ranges: dict[str, tuple[Any, Any]]) -> tuple[Any, Any]:
    """An axis range widened to show the orbit histograms' reference values (when it has data)."""
    low, high = ranges[key]
    refs = [line["at"] for line in _orbit_lines(key[:-1])] if key[:-1] in ("hill", "kepler") else []
    if low is None or not refs:
        return low, high
    pad = 0.1 * max(high - low, 1.0)
    return min(low, min(refs) - pad), max(high, max(refs) + pad)


def density_edges(labels_df: pl.DataFrame, top: list[str]) -> dict[str, list[float]]:
    """Log10 density bin edges per label: its own data range, widened to show its family's
    plausible band (at most ``BAND_REACH`` decades beyond the data)."""
    out = {}
    for row in labels_df.filter(pl.col("label").is_in(top)).iter_rows(named=True):
        if row["density__lo"] is None:
            continue
        low, high = math.log10(row["density__lo"]), math.log10(row["density__hi"])
        band = _band(row)
        if band:
            low = min(low, max(band[0], low - BAND_REACH))
            high = max(high, min(band[1], high + BAND_REACH))
        out[row["label"]] = binning.edges(low, high, BINS)
    return out


def _band(row: dict[str, Any]) -> list[float] | None:
    """The log10 plausible density band of a label's main family at its median mass."""
    params = FAMILY_PARAMETERS.get(row["family"] or "unknown")
    if params is None or params.density_band is None:
        return None
    band = band_density(params.density_band, row["median_mass"])
    return [math.log10(b) for b in band] if band else None


def _diagram_plan(bodies: pl.LazyFrame, name: str, axes: tuple[Axis, ...],
                  edges: list[Any], top: list[str]) -> pl.LazyFrame:
    """The counting plan of one diagram (on each label's own bins for the density histogram)."""
    if len(axes) == 2:
        return binning.counts_2d_plan(bodies, axes[0].expr(), edges[0], axes[1].expr(), edges[1])
    if name == "density":
        per_label = pl.LazyFrame({"label": list(edges[0]),
                                  "lo": [e[0] for e in edges[0].values()],
                                  "width": [(e[-1] - e[0]) / BINS for e in edges[0].values()]},
                                 schema={"label": pl.String, "lo": pl.Float64,
                                         "width": pl.Float64})
        index = ((axes[0].expr() - pl.col("lo")) / pl.col("width")).floor().cast(pl.Int64)
        return (bodies.join(per_label, on="label", how="inner")
                .select("label", index.clip(0, BINS - 1).alias("bin")).drop_nulls()
                .group_by("label", "bin").agg(pl.len().alias("n")))
    return binning.counts_plan(bodies, axes[0].expr(), edges[0])


def _flagged_plan(findings: pl.LazyFrame, bodies: pl.LazyFrame, name: str,
                  axes: tuple[Axis, ...]) -> pl.LazyFrame:
    """The most serious finding per body among the diagram's rules, with its coordinates."""
    rank = pl.col("severity").replace_strict(SEVERITY_RANK, default=9, return_dtype=pl.Int64)
    order = {"by": ["rank", "margin"], "descending": [False, True], "nulls_last": True}
    worst = (findings.filter(pl.col("rule").is_in(DIAGRAM_RULES[name]))
             .with_columns(rank.alias("rank")).sort(**order)
             .unique("body", keep="first", maintain_order=True))
    coords = bodies.select(pl.col("id").alias("body"),
                           *[axis.expr().alias("xy"[i]) for i, axis in enumerate(axes)])
    return (worst.join(coords, on="body", how="inner").drop_nulls(list("xy"[:len(axes)]))
            .sort(**order).head(FLAGGED_CAP)
            .select("body", "label", "rule", "severity", "message", "margin",
                    *list("xy"[:len(axes)])))


def _diagram_result(name: str, edges: list[Any], counts: pl.DataFrame,
                    flagged: list[dict[str, Any]], labels_df: pl.DataFrame,
                    top: list[str]) -> dict[str, Any]:
    """Assemble one diagram's JSON from its collected counts."""
    out: dict[str, Any] = {"flagged": flagged}
    if len(edges) == 2:
        out.update(x_edges=edges[0], y_edges=edges[1],
                   z=binning.dense_matrix(counts, len(edges[0]) - 1, len(edges[1]) - 1))
    elif name != "density":
        out["edges"] = edges[0]
    if name == "density":
        out["series"] = _density_series(counts, edges[0], labels_df, top)
    elif name == "mass_radius":
        out["curves"] = _mass_radius_curves(edges[0])
    elif name == "roche":
        out["lines"] = [{"name": "rigid Roche limit", "coefficient": RIGID_ROCHE_COEFFICIENT},
                        {"name": "fluid Roche limit", "coefficient": FLUID_ROCHE_COEFFICIENT}]
    else:
        out["counts"] = binning.dense_counts(counts, len(edges[0]) - 1)
        out["lines"] = _orbit_lines(name)
    return out


def _density_series(counts: pl.DataFrame, edges: dict[str, list[float]],
                    labels_df: pl.DataFrame, top: list[str]) -> list[dict[str, Any]]:
    """Per label with densities: its bins, counts and family band at the label's median mass."""
    by_label = binning.dense_counts_by(counts, "label", BINS)
    info = {r["label"]: r for r in labels_df.iter_rows(named=True)}
    return [{"label": label, "family": info[label]["family"],
             "median_mass": info[label]["median_mass"], "edges": edges[label],
             "counts": by_label.get(label, [0] * BINS), "band": _band(info[label])}
            for label in top if label in edges]


def _mass_radius_curves(x_edges: list[float]) -> list[dict[str, Any]]:
    """Composition curves sampled across the diagram's mass range (log10 M_earth, log10 R_earth)."""
    grid = np.linspace(x_edges[0], x_edges[-1], 120)
    curves = []
    for name, radius, (low, high) in _MR_CURVES:
        mass = 10.0**grid * M_EARTH
        keep = (mass >= low) & (mass <= high)
        if keep.sum() >= 2:
            y = np.log10(np.asarray(radius(mass[keep])) / R_EARTH)
            curves.append({"name": name, "x": grid[keep].tolist(), "y": y.tolist()})
    return curves


def _orbit_lines(name: str) -> list[dict[str, Any]]:
    """Reference values of the orbit-margin histograms (Hill: log10 ratio; Kepler: residual %)."""
    if name == "hill":
        stable = float(stable_hill_fraction(0.0, 0.0))
        return [{"name": "Hill radius", "at": 0.0},
                {"name": "stable prograde limit (circular)", "at": math.log10(stable)}]
    tolerance = 100.0 * OrbitSettings().kepler_tolerance
    return [{"name": "Kepler's third law", "at": 0.0},
            {"name": f"kepler-mismatch tolerance (-{tolerance:g} %)", "at": -tolerance},
            {"name": f"kepler-mismatch tolerance (+{tolerance:g} %)", "at": tolerance}]


def _distributions(bodies: pl.LazyFrame, fields: list[str], ranges: dict[str, tuple[Any, Any]],
                   top: list[str], workdir: Path) -> dict[str, Any]:
    """Per numeric field x label histograms on shared bins, and the artefacts found in them."""
    subset = bodies.filter(pl.col("label").is_in(top))
    fields = [f for f in fields if binning.edges(*ranges[f], BINS)]
    edges = {f: binning.edges(*ranges[f], BINS) for f in fields}
    plans = [binning.counts_plan(subset, distribution_axis(f).expr(), edges[f], group="label")
             for f in fields]
    out: dict[str, Any] = {}
    for field, frame in zip(fields, pl.collect_all(plans), strict=True):
        by_label = binning.dense_counts_by(frame, "label", BINS)
        out[field] = {"log": field not in LINEAR_FIELDS, "unit": DISTRIBUTION_FIELDS.get(field, ""),
                      "edges": edges[field],
                      "series": [{"label": lb, "counts": by_label[lb]} for lb in top
                                 if lb in by_label]}
    artefacts = _records(_read_optional(workdir / "artefacts.parquet"))
    return {"fields": out, "artefacts": artefacts}


def _records(frame: pl.DataFrame | None) -> list[dict[str, Any]]:
    """Rows as dicts with non-finite floats turned into None (strict JSON has no NaN)."""
    if frame is None:
        return []
    return [{k: (None if isinstance(v, float) and not math.isfinite(v) else v)
             for k, v in row.items()} for row in frame.iter_rows(named=True)]
