"""Rules about tides over time: strong tidal heating, and orbits that tides end within a small
part of their system's age (a snapshot caught in a short-lived state).

Both read the columns of ``tide_context``; parameters (rigidity, Q) are each family's.
"""

from __future__ import annotations

import polars as pl

from bodycensus.science.families import NON_STELLAR_FAMILIES
from bodycensus.science.physics.tides import IO_HEAT_FLUX
from bodycensus.science.rules.base import Rule, fmt, say
from bodycensus.science.rules.orbit import OrbitSettings


def _tidal_heating() -> Rule:
    flux = pl.col("tidal_heat_flux")
    return Rule(
        id="tidal-heating", title="Tidally heated more strongly than Io", severity="note",
        source="Peale, Cassen & Reynolds 1979, Science 203, 892; Segatz et al. 1988, Icarus 75, "
               "187 (E = 21/2 k2/Q G M^2 R^5 n e^2 / a^6); Io ~2.4 W/m2 (~1e14 W)",
        needs=("tidal_heat_flux",), value=flux, limit=pl.lit(IO_HEAT_FLUX), unit="W/m2",
        scope="orbit", families=NON_STELLAR_FAMILIES,
        message=pl.format("tides dissipate {} W, {} W/m2 at the surface: more than Io's {} W/m2",
                          fmt(pl.col("tidal_heating")), fmt(flux), pl.lit(f"{IO_HEAT_FLUX:g}")),
    )


def _short_lived_orbit(settings: OrbitSettings) -> Rule:
    ratio, fraction = pl.col("life_to_age"), settings.short_life_fraction
    short = ratio < fraction
    return Rule(
        id="short-lived-orbit", title="An orbit that tides end soon, compared with its age",
        severity="unstable",
        source="constant-Q decay da/dt = -(9/2) sqrt(G/M) R^5 (m/Q') a^(-11/2) (Jackson, "
               "Greenberg & Barnes 2008, ApJ 678, 1396; Goldreich & Soter 1966, Icarus 5, 375)",
        needs=("life_to_age", "tidal_decay_time"), value=ratio,
        limit=pl.when(short).then(pl.lit(fraction)).otherwise(pl.lit(1.0)), unit="x system age",
        direction="below", scope="orbit", families=NON_STELLAR_FAMILIES,
        severity_expr=pl.when(short).then(pl.lit("unstable")).otherwise(pl.lit("note")),
        also=("note",),
        message=pl.format("tides bring the orbit to its parent's Roche limit or surface in {}, "
                          "{}x the system's age", say(pl.col("tidal_decay_time"), "age"),
                          fmt(ratio)),
    )


def tide_rules(settings: OrbitSettings) -> tuple[Rule, ...]:
    """Every tide rule."""
    return (_tidal_heating(), _short_lived_orbit(settings))
