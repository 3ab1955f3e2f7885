"""The unit a curator reads each quantity in: Earth, Jupiter or solar masses and radii by the
body's family, km or au by the size of an orbit, days, hours, Gyr, g/cm3. Chosen here once, for
the pages, the findings' messages and the diagrams; SI stays inside, on hover and in exports.

A quantity (``mass``, ``radius``, ``distance``, ...) has a dimension and a rule: a unit per
family where the family decides (a gas giant's mass in Jupiter masses), else the first unit of a
ladder whose bound the value's size stays under (an orbit of 0.005 au in km). ``DisplayChoice``
is what a person chose in the URL: the family units (the default), SI throughout, or one unit
per dimension. The same rule is written twice on purpose, as polars expressions for the messages
the engine writes and as plain Python for the pages, and a test holds the two equal.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

import polars as pl
from polars.expr.whenthen import ChainedThen, Then

from bodycensus.science.units import AU, DAY, M_EARTH, M_SUN, UNITS, Unit

# Units only shown, never read from a file.
_SHOWN_ONLY: tuple[Unit, ...] = (
    Unit("m/s", "speed", 1.0), Unit("km/s", "speed", 1e3), Unit("m/s2", "acceleration", 1.0),
)
DISPLAY_UNITS: dict[str, Unit] = {**UNITS, **{u.name: u for u in _SHOWN_ONLY}}
# How a unit is written beside a number (the same in messages, tables and axis titles).
SYMBOLS: dict[str, str] = {
    "earth_mass": "M_earth", "jupiter_mass": "M_jup", "solar_mass": "M_sun",
    "earth_radius": "R_earth", "jupiter_radius": "R_jup", "solar_radius": "R_sun",
    "solar_luminosity": "L_sun", "years": "yr", "1": "",
}
SI_BY_DIMENSION: dict[str, str] = {
    "mass": "kg", "length": "m", "time": "s", "density": "kg/m3", "temperature": "K",
    "power": "W", "age": "years", "speed": "m/s", "acceleration": "m/s2", "dimensionless": "1",
    "angle": "rad",
}


def symbol(unit: str) -> str:
    """How ``unit`` is written beside a number: ``M_earth`` for earth_mass, ``km`` for km."""
    return SYMBOLS.get(unit, unit)


_EARTHLIKE = ("iron", "rock", "rock_ice", "ice", "ocean", "ice_giant")
_JOVIAN = ("gas_giant", "brown_dwarf")
_STELLAR = ("star", "giant_star", "white_dwarf", "neutron_star", "black_hole")
_COMPACT = ("white_dwarf", "neutron_star", "black_hole")


@dataclass(frozen=True)
class Quantity:
    """How one quantity is shown: its dimension, a unit per family, and a ladder of (bound in
    SI, unit) for the rest: the first unit whose bound the value's size stays under."""

    name: str
    dimension: str
    by_family: Mapping[str, str] = field(default_factory=dict)
    ladder: tuple[tuple[float, str], ...] = ()


def _families(unit: str, families: tuple[str, ...]) -> dict[str, str]:
    return dict.fromkeys(families, unit)


QUANTITIES: dict[str, Quantity] = {q.name: q for q in (
    Quantity("mass", "mass",
             {**_families("earth_mass", _EARTHLIKE), "minor": "kg",
              **_families("jupiter_mass", _JOVIAN), **_families("solar_mass", _STELLAR)},
             ((1e-6 * M_EARTH, "kg"), (30 * M_EARTH, "earth_mass"), (0.05 * M_SUN,
                                                                      "jupiter_mass"),
              (math.inf, "solar_mass"))),
    Quantity("radius", "length",
             {**_families("earth_radius", _EARTHLIKE), "minor": "km",
              **_families("jupiter_radius", _JOVIAN), "star": "solar_radius",
              "giant_star": "solar_radius", **_families("km", _COMPACT)},
             ((3e6, "km"), (2e7, "earth_radius"), (3e8, "jupiter_radius"),
              (math.inf, "solar_radius"))),
    Quantity("distance", "length", {}, ((0.01 * AU, "km"), (math.inf, "au"))),
    Quantity("period", "time", {}, ((1e4 * DAY, "d"), (math.inf, "yr"))),
    Quantity("rotation", "time", {}, ((1e3 * DAY, "h"), (math.inf, "d"))),
    Quantity("age", "age", {}, ((1e5, "years"), (1e8, "Myr"), (math.inf, "Gyr"))),
    Quantity("density", "density", {}, ((math.inf, "g/cm3"),)),
    Quantity("gravity", "acceleration", {}, ((math.inf, "m/s2"),)),
    Quantity("speed", "speed", {}, ((math.inf, "km/s"),)),
    Quantity("temperature", "temperature", {}, ((math.inf, "K"),)),
    Quantity("luminosity", "power", {}, ((math.inf, "solar_luminosity"),)),
    Quantity("ratio", "dimensionless", {}, ((math.inf, "1"),)),
    Quantity("angle", "angle", {}, ((math.inf, "deg"),)),
)}
# The quantity of each canonical field and derived column that has a unit.
FIELD_QUANTITIES: dict[str, str] = {
    "mass": "mass", "radius": "radius", "semi_major_axis": "distance", "period": "period",
    "rotation_period": "rotation", "age": "age", "temperature": "temperature",
    "luminosity": "luminosity", "eccentricity": "ratio",
    "density": "density", "gravity": "gravity", "escape_speed": "speed", "periapsis": "distance",
    "apoapsis": "distance", "parent_mass": "mass", "parent_radius": "radius",
    "parent_density": "density", "roche_rigid": "distance", "roche_fluid": "distance",
    "hill_radius": "distance", "parent_hill_radius": "distance",
    "stable_hill_limit": "distance", "kepler_period": "period", "barycentre_offset": "distance",
    "tidal_lock_time": "age", "period_ratio": "ratio", "roche_x": "ratio", "roche_y": "ratio",
    "hill_ratio": "ratio", "gravity_g0": "ratio",
    "inclination": "angle", "ring_inner": "distance", "ring_outer": "distance",
    "ring_mass": "mass", "ring_density": "density", "tidal_decay_time": "age",
    "ring_inner_edge": "distance", "ring_outer_edge": "distance",
    "ring_planet_radius": "radius", "ring_roche_rigid": "distance",
    "ring_roche_fluid": "distance", "ring_implied_density": "density",
}


@dataclass(frozen=True)
class DisplayChoice:
    """A person's choice of units: ``family`` (each quantity in the unit of its family and
    size) or ``si``; ``fixed`` pins one unit per dimension (``{"mass": "jupiter_mass"}``)."""

    system: str = "family"
    fixed: Mapping[str, str] = field(default_factory=dict)

    def unit(self, quantity: str, family: str | None, size: float | None) -> str:
        """The unit to show a value of ``quantity`` in, for a body of ``family`` whose value (or
        reference value) is ``size`` in SI."""
        q = QUANTITIES[quantity]
        if q.dimension in self.fixed:
            return self.fixed[q.dimension]
        if self.system == "si":
            return SI_BY_DIMENSION[q.dimension]
        return family_unit(q, family, size)


FAMILY_UNITS = DisplayChoice()
SI_UNITS = DisplayChoice("si")


def family_unit(q: Quantity, family: str | None, size: float | None) -> str:
    """The family's unit of ``q``, else the ladder's rung for ``size`` (the top one without)."""
    if family in q.by_family:
        return q.by_family[family or ""]
    magnitude = abs(size) if size is not None and math.isfinite(size) else math.inf
    return next(unit for bound, unit in q.ladder if magnitude < bound)


def to_unit(value_si: float | None, unit: str) -> float | None:
    """A value in SI (years for ages) expressed in ``unit``."""
    if value_si is None or not math.isfinite(value_si):
        return None
    return value_si / DISPLAY_UNITS[unit].to_si


def unit_cases(quantity: str, family: pl.Expr, size: pl.Expr) -> list[tuple[pl.Expr, str]]:
    """The polars twin of ``family_unit``, as ordered cases (condition, unit): the first whose
    condition holds gives the unit, the last holds always. Kept short (a quantity without
    family units has only its ladder; one unit, no condition) because rule messages inline
    them and polars plans every branch."""
    q = QUANTITIES[quantity]
    cases = [(family.is_in(sorted(f for f, u in q.by_family.items() if u == unit)), unit)
             for unit in dict.fromkeys(q.by_family.values())]
    magnitude = size.abs().fill_nan(None).fill_null(math.inf)
    cases += [(magnitude < bound, unit) for bound, unit in q.ladder[:-1]]
    return [*cases, (pl.lit(True), q.ladder[-1][1])]


def when_cases(cases: list[tuple[pl.Expr, str]], then: Callable[[str], pl.Expr]) -> pl.Expr:
    """``then(unit)`` of the first case that holds (no ``when`` at all for a single case)."""
    if len(cases) == 1:
        return then(cases[0][1])
    chain: Then | ChainedThen = pl.when(cases[0][0]).then(then(cases[0][1]))
    for cond, unit in cases[1:-1]:
        chain = chain.when(cond).then(then(unit))
    return chain.otherwise(then(cases[-1][1]))


def unit_expr(quantity: str, family: pl.Expr, size: pl.Expr) -> pl.Expr:
    """The unit name per row, from ``family`` and ``size`` (``unit_cases`` as one column)."""
    return when_cases(unit_cases(quantity, family, size), pl.lit)


def in_unit(value: pl.Expr, unit: str) -> pl.Expr:
    """``value`` (SI) divided into ``unit``."""
    return value / DISPLAY_UNITS[unit].to_si


def scaled_expr(value: pl.Expr, unit: pl.Expr) -> tuple[pl.Expr, pl.Expr]:
    """``value`` (SI) divided into the per-row ``unit``, and that unit's symbol."""
    factors = {name: u.to_si for name, u in DISPLAY_UNITS.items()}
    factor = unit.replace_strict(factors, default=1.0, return_dtype=pl.Float64)
    shown = unit.replace_strict({n: symbol(n) for n in DISPLAY_UNITS}, default=unit,
                                return_dtype=pl.String)
    return value / factor, shown


# --- messages said again in another unit --------------------------------------------------------
_BY_SYMBOL: dict[str, str] = {symbol(n): n for n in DISPLAY_UNITS if symbol(n)}
_QUANTITY_TEXT = re.compile(
    r"(?<![\w.])(-?\d+(?:\.\d+)?(?:e[+-]?\d+)?) (" +
    "|".join(re.escape(s) for s in sorted(_BY_SYMBOL, key=len, reverse=True)) + r")(?![\w/])")
# The quantity a dimension's numbers stand for in a message when the choice leaves it to size.
_DIMENSION_QUANTITY = {"mass": "mass", "length": "distance", "time": "period", "age": "age",
                       "density": "density", "speed": "speed", "acceleration": "gravity",
                       "temperature": "temperature", "power": "luminosity"}


def resay(message: str | None, choice: DisplayChoice) -> str | None:
    """A message the engine wrote in family units (``'periapsis 1213 km ...'``) with each
    number-and-unit said in the units of ``choice``; unchanged for the family choice."""
    if message is None or choice == FAMILY_UNITS:
        return message

    def swap(match: re.Match[str]) -> str:
        unit = DISPLAY_UNITS[_BY_SYMBOL[match[2]]]
        value = float(match[1]) * unit.to_si
        quantity = _DIMENSION_QUANTITY.get(unit.dimension)
        if quantity is None:
            return match[0]
        target = choice.unit(quantity, None, value)
        return f"{short(to_unit(value, target))} {symbol(target)}".rstrip()

    # quoted text (a body's id or label) is the catalogue's own and stays as it is
    parts = re.split(r"('[^']*')", message)
    return "".join(p if p.startswith("'") else _QUANTITY_TEXT.sub(swap, p) for p in parts)


def short(value: float | None) -> str:
    """A number as messages write it: 4 significant figures, powers of ten when large or small."""
    if value is None:
        return ""
    if value != 0 and (abs(value) >= 1e6 or abs(value) < 1e-3):
        mantissa, exponent = f"{value:.3e}".split("e")
        return f"{float(mantissa):g}e{int(exponent)}"
    return f"{value:.4g}"
