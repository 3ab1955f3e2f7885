"""The registry of diagrams: one record per diagram, in the order the chooser shows them.

Aggregates, figures, the Diagrams screen, its chooser, the report and the API all iterate
``DIAGRAMS``; a diagram's key is the one in URLs (``?diagram=mass-radius``) and in the
aggregates (``aggregates["diagrams"]["mass-radius"]``). Adding a diagram is one record here and
its two functions (aggregate and figure) in a module of its own.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from bodycensus.diagrams import (
    density,
    distributions,
    heating,
    lifetimes,
    mass_radius,
    orbits,
    rings,
    roche,
    tidal,
)
from bodycensus.diagrams.base import Diagram

DIAGRAMS: tuple[Diagram[Any], ...] = (
    Diagram(
        key="density", title="Density",
        caption="The bodies of one label by mass and bulk density (log-log). The two edges are "
                "its family's plausible band at each mass, as the family-density rule applies "
                "it to each body (composition curves of Seager et al. 2007, cold H/He, white-"
                "dwarf and main-sequence relations, times the family's factors): a body "
                "outside them is flagged. Axes in the label's units; the counts in SI as JSON.",
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
        axes=orbits.AXES, rules=orbits.RULES, aggregate=orbits.aggregate, figure=orbits.figure,
        selects=orbits.panel_axes),
    Diagram(
        key="tidal-locking", title="Tidal locking",
        caption="Orbiting bodies by age and by the time tides need to despin them (Gladman et "
                "al. 1996, after Peale 1977), log-log. Below the solid line tides have had time "
                "to lock a body; a body given as locked above the tidal-lock-age limit (a factor "
                "times its age, as the catalogue was checked) is flagged.",
        axes=tidal.AXES, rules=tidal.RULES, aggregate=tidal.aggregate, figure=tidal.figure),
    Diagram(
        key="tidal-heating", title="Tidal heating",
        caption="Bodies on eccentric orbits by distance in fluid Roche limits and tidal heat "
                "flux, E = 21/2 (k2/Q) G M^2 R^5 n e^2 / a^6 over the surface (Peale, Cassen & "
                "Reynolds 1979; Segatz et al. 1988), k2/Q of each family, log-log. Dashed: the "
                "rigid and fluid Roche limits; green: Io's measured ~2.4 W/m2 (1e14 W).",
        axes=heating.AXES, rules=heating.RULES,
        aggregate=heating.aggregate, figure=heating.figure),
    Diagram(
        key="remaining-life", title="Remaining tidal life",
        caption="Per label, the time left before the tide on the parent brings a decaying orbit "
                "to its Roche limit or surface (constant Q': Goldreich & Soter 1966; Jackson, "
                "Greenberg & Barnes 2008), over the system's age, log scale. Dashed: one age; "
                "orange: the short-lived-orbit limit the catalogue was checked with. A "
                "generator that ignores tides piles bodies up far below 1.",
        axes=lifetimes.AXES, rules=lifetimes.RULES, aggregate=lifetimes.aggregate,
        figure=lifetimes.figure, choices=lifetimes.choices),
    Diagram(
        key="rings", title="Rings",
        caption="Rings by x = (planet density / material density)^(1/3), solid ice (917 "
                "kg/m3) when the material is not given, and y = outer edge / planet radius. "
                "On the fluid line y = 2.44 x (Roche 1849) the outer edge implies the "
                "material's own density, above it a lighter one: Saturn's A ring implies ~770 "
                "kg/m3. Rigid line 1.26 x (Shu 1982); the ring-beyond-roche limit as checked.",
        axes=rings.AXES, rules=rings.RULES, aggregate=rings.aggregate, figure=rings.figure),
    Diagram(
        key="distributions", title="Distributions",
        caption="Histogram of a numeric field per label; artefacts found in it are marked: a "
                "line at a cutoff, a shaded band for a gap, a star for a spike.",
        axes=distributions.AXES, rules=distributions.RULES,
        aggregate=distributions.aggregate, figure=distributions.figure,
        choices=distributions.choices, selects=distributions.field_axes),
)
BY_KEY: Mapping[str, Diagram[Any]] = {d.key: d for d in DIAGRAMS}
KEYS: tuple[str, ...] = tuple(BY_KEY)


def get(key: str | None) -> Diagram[Any]:
    """The diagram of ``key``; the first (density) for none or an unknown key."""
    return BY_KEY.get(key or "", DIAGRAMS[0])


def aggregate_of(aggs: Mapping[str, Any], key: str) -> Any:
    """A diagram's aggregate from the stored aggregates (None when it has none)."""
    return (aggs.get("diagrams") or {}).get(key)

