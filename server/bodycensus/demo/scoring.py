"""Score a run against the demo's ground truth: recall per planted defect, false alarms.

A planted rule defect is found when its body has a finding of that rule. A planted artefact is
found when an artefact of the same kind, label and field is reported. A clean body (absent from
the truth file) with an ``impossible`` or ``error`` finding is a false alarm.
"""

from __future__ import annotations

from dataclasses import dataclass

import polars as pl

from bodycensus.science.severity import at_or_above

SERIOUS = at_or_above("impossible")


@dataclass(frozen=True)
class Score:
    """Recall by rule and artefact kind, and how many clean bodies were called impossible."""

    by_rule: pl.DataFrame  # rule, planted, found, recall
    artefacts: pl.DataFrame  # kind, label, field, found
    extra_artefacts: pl.DataFrame  # reported but not planted (label scope)
    clean_bodies: int
    false_serious: pl.DataFrame  # clean bodies with an error or impossible finding

    @property
    def recall(self) -> float:
        """Planted rule defects found, over all planted."""
        return int(self.by_rule["found"].sum()) / max(int(self.by_rule["planted"].sum()), 1)

    @property
    def false_impossible_rate(self) -> float:
        """Clean bodies with an error or impossible finding, over all clean bodies."""
        return self.false_serious["body"].n_unique() / max(self.clean_bodies, 1)


def score(findings: pl.DataFrame, artefacts: pl.DataFrame, truth: pl.DataFrame,
          body_ids: pl.Series, families: dict[str, str]) -> Score:
    """Compare one run's findings and artefacts with the demo's truth table. A family-level
    artefact echoing a planted one (same kind and field, the planted label's family) is no extra."""
    planted = truth.filter(pl.col("kind") == "rule").select("rule", "body").unique()
    hits = findings.select("rule", "body").unique().with_columns(pl.lit(True).alias("hit"))
    matched = planted.join(hits, on=["rule", "body"], how="left")
    by_rule = (matched.group_by("rule")
               .agg(pl.len().alias("planted"), pl.col("hit").fill_null(False).sum().alias("found"))
               .with_columns((pl.col("found") / pl.col("planted")).alias("recall")).sort("rule"))
    reported = artefacts.select("scope", "kind", "label", "field").unique()
    wanted = truth.filter(pl.col("kind") == "artefact").select(
        pl.col("rule").alias("kind"), "label", "field")
    found = wanted.join(reported.filter(scope="label").drop("scope")
                        .with_columns(pl.lit(True).alias("found")),
                        on=["kind", "label", "field"], how="left")
    echoes = wanted.with_columns(pl.col("label").replace_strict(families, default=None))
    extra = pl.concat([
        reported.filter(scope="label").drop("scope").join(wanted, on=["kind", "label", "field"],
                                                          how="anti"),
        reported.filter(scope="family").drop("scope").join(echoes, on=["kind", "label", "field"],
                                                           how="anti"),
    ])
    planted_bodies = truth["body"].drop_nulls().unique().implode()
    clean = body_ids.filter(~body_ids.is_in(planted_bodies))
    false_serious = findings.filter(pl.col("severity").is_in(SERIOUS)
                                    & ~pl.col("body").is_in(planted_bodies))
    return Score(by_rule, found.with_columns(pl.col("found").fill_null(False)), extra,
                 clean.n_unique(), false_serious)


def score_text(result: Score) -> str:
    """A readable report of a score."""
    lines = [(f"rule defects: {result.by_rule['found'].sum()} of {result.by_rule['planted'].sum()}"
             f" found (recall {result.recall:.3f})")]
    for row in result.by_rule.filter(pl.col("recall") < 1).iter_rows(named=True):
        lines.append(f"  missed: {row['rule']} {row['planted'] - row['found']} of {row['planted']}")
    for row in result.artefacts.iter_rows(named=True):
        state = "found" if row["found"] else "MISSED"
        lines.append(f"artefact {row['kind']} in '{row['label']}' {row['field']}: {state}")
    for row in result.extra_artefacts.iter_rows(named=True):
        lines.append(f"artefact not planted: {row['kind']} in '{row['label']}' {row['field']}")
    lines.append(f"clean bodies: {result.clean_bodies:,}; with an error or impossible finding: "
                 f"{result.false_serious['body'].n_unique():,} "
                 f"(rate {result.false_impossible_rate:.2e})")
    for row in result.false_serious.head(10).iter_rows(named=True):
        lines.append(f"  false: {row['body']} {row['rule']} {row['message']}")
    return "\n".join(lines) + "\n"
