"""The registry of diagrams: one record per diagram, in the order the chooser shows them.

Aggregates, figures, the Diagrams screen, its chooser, the report and the API all iterate
``DIAGRAMS``; a diagram's key is the one in URLs (``?diagram=mass-radius``) and in the
aggregates (``aggregates["diagrams"]["mass-radius"]``). Adding a diagram is one record here and
its two functions (aggregate and figure) in a module of its own.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from bodycensus.diagrams import density, distributions, mass_radius, orbits, roche, tidal
from bodycensus.diagrams.base import Diagram

DIAGRAMS: tuple[Diagram[Any], ...] = (
    Diagram(
        key="density", title="Density",
        caption="Bulk density of the bodies of one label; shaded: the plausible band of its "
                "family at the label's median mass (composition curves of Seager et al. 2007, "
                "cold H/He, stellar relations; factors in families.py).",
        axes=density.AXES, rules=density.RULES, per_label=True,
        aggregate=density.aggregate, figure=density.figure, choices=density.choices),
    Diagram(
        key="mass-radius", title="Mass and radius",
        caption="Bodies binned by mass and radius (log-log); lines: radius of a cold sphere of "
                "pure iron, rock (MgSiO3) and water ice (Seager et al. 2007 fits, up to 20 Earth "
                "masses) and of cold hydrogen-helium.",
        axes=mass_radius.AXES, rules=mass_radius.RULES,
        aggregate=mass_radius.aggregate, figure=mass_radius.figure),
    Diagram(
        key="roche", title="Roche plane",
        caption="x = (parent density / body density)^(1/3), y = periapsis / parent radius. Under "
                "the rigid line y = 1.26 x (Shu 1982) or the fluid line y = 2.44 x (Roche 1849) "
                "a body is inside that Roche limit; under y = 1 its orbit cuts the parent.",
        axes=roche.AXES, rules=roche.RULES, aggregate=roche.aggregate, figure=roche.figure),
    Diagram(
        key="orbits", title="Orbit margins",
        caption="Left: apoapsis over the parent's Hill radius, with the stable prograde limit "
                "0.49 (Domingos, Winter & Yokoyama 2006). Right: how far each period is from "
                "Kepler's third law, in per cent, with the tolerance of kepler-mismatch this "
                "catalogue was checked with; bodies beyond +-10 % sit at the ends.",
        axes=orbits.AXES, rules=orbits.RULES, aggregate=orbits.aggregate, figure=orbits.figure),
    Diagram(
        key="tidal-locking", title="Tidal locking",
        caption="Orbiting bodies by age and by the time tides need to despin them (Gladman et "
                "al. 1996, after Peale 1977), log-log. Below the solid line tides have had time "
                "to lock a body; a body given as locked above the tidal-lock-age limit (a factor "
                "times its age, as the catalogue was checked) is flagged.",
        axes=tidal.AXES, rules=tidal.RULES, aggregate=tidal.aggregate, figure=tidal.figure),
    Diagram(
        key="distributions", title="Distributions",
        caption="Histogram of a numeric field per label; artefacts found in it are marked: a "
                "line at a cutoff, a shaded band for a gap, a star for a spike.",
        axes=distributions.AXES, rules=distributions.RULES,
        aggregate=distributions.aggregate, figure=distributions.figure,
        choices=distributions.choices),
)
BY_KEY: Mapping[str, Diagram[Any]] = {d.key: d for d in DIAGRAMS}
KEYS: tuple[str, ...] = tuple(BY_KEY)


def get(key: str | None) -> Diagram[Any]:
    """The diagram of ``key``; the first (density) for none or an unknown key."""
    return BY_KEY.get(key or "", DIAGRAMS[0])


def aggregate_of(aggs: Mapping[str, Any], key: str) -> Any:
    """A diagram's aggregate from the stored aggregates (None when it has none)."""
    return (aggs.get("diagrams") or {}).get(key)

