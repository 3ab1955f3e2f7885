"""Judge every finding of the issue-12 runs: true, false or doubtful, with the reason.

    python tests/real_judge.py BEFORE AFTER > judged.md   # folders written by tests/real_run.py

How a finding is judged (rule by rule below, ``judge``): first against the OTHER catalogue, an
independent compilation of the same planets (TEPCat against exoplanet.eu and back; names matched
without case, spaces, punctuation and leading zeros, TEPCat's single planets given their "b").
A density finding whose body has, in the other catalogue, a density within 2x of this one
describes the body as published twice: the data is fine and a finding that calls it broken is
false. A density that differs more than 2x between the two is a real error in one of them: the
finding is true. Kepler mismatches over 20 % are true (every one checked in issue 12 was); below,
true where the other catalogue's a, P and host mass agree with Kepler's law within 5 % and this
one's do not. Without a counterpart, the rule's own physics decides where it is unambiguous
(a brown dwarf host, a white-dwarf or pulsar host, a derivable semi-major axis, an upper-limit
mass, an unbound interstellar object), else the finding is doubtful.

Rates: bodies with at least one false finding of a severity class over all bodies of the
catalogue (hosts included); doubtful findings are reported apart, and the rate with them
counted false is given too.
"""

from __future__ import annotations

import re
import sys
from collections import Counter
from pathlib import Path

import polars as pl

M_SUN, R_SUN, M_JUP, AU, DAY = 1.98841e30, 6.957e8, 1.89813e27, 1.495978707e11, 86400.0
G = 6.6743e-11
CATALOGUES = ("tepcat", "exoplanet_eu", "nasa_archive")
OTHER = {"tepcat": "exoplanet_eu", "exoplanet_eu": "tepcat", "nasa_archive": "exoplanet_eu"}


def key(name: str | None, tepcat: bool) -> str | None:
    """A planet's name for matching across catalogues."""
    if not name:
        return None
    text = re.sub(r"[^0-9a-z]", "", name.lower())
    text = re.sub(r"(?<![0-9])0+(?=[0-9])", "", text)
    if tepcat and text[-1:].isdigit():
        text += "b"
    return text


def bodies(run: Path, name: str) -> pl.DataFrame:
    return pl.read_parquet(run / name / "bodies.parquet")


def reference(after: Path, name: str) -> dict[str, dict]:
    """The other catalogue's planets by matching name: mass, radius, density, a, P, host mass."""
    table = bodies(after, name).filter(pl.col("label") != "host star")
    out = {}
    for row in table.select("id", "mass", "radius", "density", "_a", "period", "parent_mass",
                            "semi_major_axis").iter_rows(named=True):
        k = key(row["id"], name == "tepcat")
        if k:
            out[k] = row
    return out


def kepler_ratio(row: dict) -> float | None:
    a, p, m = row.get("semi_major_axis"), row.get("period"), row.get("parent_mass")
    if not (a and p and m):
        return None
    import math
    return p / (2 * math.pi * math.sqrt(a ** 3 / (G * m)))


def density_verdict(row: dict, ref: dict | None, what: str) -> tuple[str, str]:
    if ref is None or not ref.get("density") or not row.get("density"):
        return "", ""
    ratio = row["density"] / ref["density"]
    if 0.5 <= ratio <= 2.0:
        return "false", f"{what}: the other catalogue's density agrees ({ratio:.2f}x)"
    return "true", f"{what}: the other catalogue's density differs {ratio:.3g}x (a value error)"


def judge(rule: str, severity: str, row: dict, ref: dict | None, finding: dict,
          catalogue: str) -> tuple[str, str]:
    """(verdict, reason) for one finding."""
    label, message = row.get("label") or "", finding["message"] or ""
    host = label == "host star"
    if rule == "missing-value":
        if "no semi-major axis" in message and row.get("period") and row.get("parent_mass"):
            return "false", "a follows from the period and the host mass"
        return "true", "incomplete record: the value is not in the source"
    if rule == "bad-cell":
        return "true", "the source cell is not a finite number (inf/nan)"
    if rule == "non-positive":
        if row.get("mass") == 0 and (row.get("mass_error") or 0) > 0:
            return "false", "mass 0 with an uncertainty: TEPCat's upper limit"
        if row.get("mass") == 0 and catalogue == "tepcat" and "mass_error" not in row:
            return "false", "mass 0: TEPCat's upper limit (0 +X), read before uncertainties"
        if row.get("mass") == 0:
            return "true", "mass 0 without an uncertainty"
        return "true", "a non-positive value in the source"
    if rule == "bad-eccentricity":
        e = row.get("eccentricity") or 0
        if e >= 1:
            return ("false", "an unbound (interstellar) orbit called broken") \
                if severity == "error" \
                else ("true", "an unbound orbit, noted")
        return "true", "negative eccentricity"
    if rule == "parent-cycle":
        return "true", "the two brown dwarfs list each other as host"
    if rule == "under-hydrogen-burning":
        if severity == "impossible":
            return "false", "a brown dwarf host labelled star called impossible"
        return "true", "the host is a brown dwarf, the label says star"
    if rule in ("unit-slip", "denser-than-iron", "family-density", "label-outlier",
                "oversized-cold-body", "brown-dwarf-range"):
        if host:
            density = row.get("density") or 0
            if density > 1e8:
                return "false", "a white-dwarf or pulsar host (degenerate star)"
            if rule == "label-outlier":
                return "false", "a star of another stage (giant, M dwarf) among hosts"
            return "false", "a host star off the main sequence"
        if rule == "denser-than-iron" and row.get("_mass_upper_limit"):
            return "false", "the mass is an upper limit"
        verdict, reason = density_verdict(row, ref, rule)
        if verdict:
            if rule == "oversized-cold-body" and ref and ref.get("radius") and row.get("radius"):
                r = row["radius"] / ref["radius"]
                return ("false", f"the other catalogue's radius agrees ({r:.2f}x)") \
                    if 0.67 <= r <= 1.5 else ("true", f"radii differ {r:.3g}x")
            return verdict, reason
        if rule == "denser-than-iron" and (finding.get("bad_error") or False):
            return "true", "the mass's uncertainty is inf/nan: an upper limit stored as a value"
        if rule in ("unit-slip", "family-density", "oversized-cold-body") and \
                "brown dwarf" in label and (row.get("density") or 1e9) < 3e4:
            return "doubtful", "a young (large) brown dwarf? no age in the catalogue"
        if rule == "oversized-cold-body" and (row.get("_a") or 1e20) < 0.1 * AU:
            return "false", "an inflated hot giant within 0.1 au"
        return "doubtful", "no counterpart in the other catalogue"
    if rule == "kepler-mismatch":
        ratio = finding["value"]
        if abs(ratio - 1) > 0.2:
            return "true", "mismatch over 20 %"
        if ref is not None:
            other = kepler_ratio(ref)
            if other is not None and abs(other - 1) < 0.05:
                return "true", f"the other catalogue agrees with Kepler ({other:.3f}), this one not"
            if other is not None and abs(other - ratio) < 0.02:
                return "false", "the other catalogue shows the same mismatch (host mass?)"
        return "doubtful", "5-20 % mismatch without an independent check"
    if rule == "roche-lobe-overflow" and finding["value"] > 1.1:
        return "doubtful", "fills its lobe more than real mass-transferring pairs (1.04-1.08)"
    if rule in ("roche-lobe-overflow", "inside-fluid-roche", "inside-rigid-roche"):
        if "brown dwarf" in label or (row.get("period") or 1e9) < 0.2 * DAY:
            return "false", "a mass-transferring close binary (donor at its Roche lobe)"
        return "doubtful", "close orbit"
    if rule == "hill-spacing":
        if "0 mutual Hill" in message:
            return "true", "two planets on one orbit: one listed twice"
        return "doubtful", "compact system (resonance?)"
    if rule == "duplicate-orbit":
        return "true", "two entries on one orbit (the same planet or degenerate solutions)"
    if rule == "crossing-orbits":
        return "doubtful", "crossing from eccentricities with large uncertainties?"
    if rule == "short-lived-orbit":
        return "doubtful", "tidal decay depends on Q (model)"
    if rule == "heavier-than-parent":
        return "doubtful", "a companion heavier than its listed host"
    return "doubtful", "not judged"


def judged(run: Path, after: Path, name: str) -> pl.DataFrame:
    table = bodies(run, name)
    cols = [c for c in ("id", "label", "mass", "radius", "density", "_a", "period",
                        "parent_mass", "semi_major_axis", "eccentricity", "mass_error",
                        "_mass_upper_limit") if c in table.columns]
    rows = {r["id"]: r for r in table.select(cols).iter_rows(named=True)}
    bad_error = set(table.filter(pl.col("_bad").str.contains("mass_error"))["id"].to_list()) \
        if "_bad" in table.columns else set()
    ref = reference(after, OTHER[name])
    findings = pl.read_parquet(run / name / "findings.parquet")
    out = []
    for f in findings.iter_rows(named=True):
        if f["severity"] == "note":
            continue
        row = rows.get(f["body"], {})
        f["bad_error"] = f["body"] in bad_error
        verdict, reason = judge(f["rule"], f["severity"], row, ref.get(key(f["body"], name ==
                                                                           "tepcat") or ""),
                                f, name)
        out.append({"body": f["body"], "rule": f["rule"], "severity": f["severity"],
                    "verdict": verdict, "reason": reason, "message": f["message"]})
    return pl.DataFrame(out, schema={"body": pl.String, "rule": pl.String,
                                     "severity": pl.String, "verdict": pl.String,
                                     "reason": pl.String, "message": pl.String})


def rates(table: pl.DataFrame, n_bodies: int) -> dict[str, str]:
    out = {}
    for cls, sevs in (("error/impossible", ("error", "impossible")),
                      ("unstable/suspect", ("unstable", "suspect"))):
        part = table.filter(pl.col("severity").is_in(sevs))
        false = part.filter(pl.col("verdict") == "false")["body"].n_unique()
        doubt = part.filter(pl.col("verdict").is_in(["false", "doubtful"]))["body"].n_unique()
        out[cls] = (f"false {false} bodies ({false / n_bodies:.2%}); with doubtful "
                    f"{doubt} ({doubt / n_bodies:.2%})")
    return out


def main() -> None:
    before, after = Path(sys.argv[1]), Path(sys.argv[2])
    for name in CATALOGUES:
        n = bodies(after, name).height
        print(f"\n## {name}: {n:,} bodies\n")
        tables = {}
        for tag, run in (("before", before), ("after", after)):
            if not (run / name / "findings.parquet").exists():  # main could not read it
                tables[tag] = judged(after, after, name).clear()
                print(f"**{tag}**: not read (main reads no VOTable)\n")
                continue
            tables[tag] = judged(run, after, name)
            print(f"**{tag}**: " + "; ".join(f"{k}: {v}" for k, v in
                                             rates(tables[tag], n).items()) + "\n")
        print("| rule | severity | before: findings (true/false/doubtful) | after: findings "
              "(true/false/doubtful) |\n|---|---|---|---|")
        keys = sorted({(r, s) for t in tables.values()
                       for r, s in t.select("rule", "severity").unique().iter_rows()})
        for rule, sev in keys:
            cells = []
            for tag in ("before", "after"):
                part = tables[tag].filter((pl.col("rule") == rule) & (pl.col("severity") == sev))
                c = Counter(part["verdict"].to_list())
                cells.append(f"{part.height} ({c['true']}/{c['false']}/{c['doubtful']})")
            print(f"| {rule} | {sev} | {cells[0]} | {cells[1]} |")
        remaining = tables["after"]
        print("\nAfter, by verdict and reason:\n")
        for (rule, verdict, reason), count in Counter(
                remaining.select("rule", "verdict", "reason").iter_rows()).most_common():
            print(f"- {rule}: {verdict} x{count}: {reason}")
        true_ones = remaining.filter(pl.col("verdict") == "true")
        print("\nTrue problems found (after), examples:\n")
        for row in true_ones.filter(~pl.col("rule").is_in(["missing-value"])) \
                .unique(subset="rule", keep="first").iter_rows(named=True):
            print(f"- `{row['body']}` {row['rule']}: {row['message']} ({row['reason']})")
        remaining.write_csv(after / f"{name}-judged.csv")


if __name__ == "__main__":
    main()
