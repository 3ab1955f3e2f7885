"""Values as a curator reads them: a finding's value, limit and message, a body's fields and
derived quantities, a system's rows, in the units of the view's ``DisplayChoice``
(``science.display_units``), each with its SI value kept for the hover text.

Pure functions over the plain rows the queries return; the templates show ``text`` and
``unit`` and put ``si`` in a title attribute.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, TypedDict

from bodycensus.science.display_units import (
    DISPLAY_UNITS,
    FAMILY_UNITS,
    FIELD_QUANTITIES,
    DisplayChoice,
    resay,
    short,
    symbol,
    to_unit,
)
from bodycensus.science.rules import RULES_BY_ID

# A unit written in a findings table, back to its name: "M_sun" -> solar_mass, "m" -> m.
_BY_SYMBOL = {symbol(name): name for name in DISPLAY_UNITS if symbol(name)}
_DIMENSION_QUANTITY = {"mass": "mass", "length": "distance", "density": "density",
                       "time": "period", "age": "age"}


class Shown(TypedDict):
    """A value in its display unit: the number as text, the unit's symbol, SI for the hover."""

    text: str
    unit: str
    si: str


def number(value: float | None) -> str:
    """A number for a table cell: 4 significant figures, powers of ten when far from 1."""
    if value is None:
        return ""
    if value != 0 and (abs(value) >= 1e7 or abs(value) < 1e-3):
        return short(value)  # as the messages write it: 1.189e7
    return f"{value:,.4g}" if abs(value) < 1e4 else f"{value:,.0f}"


def _si_text(value: float | None, unit: str) -> str:
    """The SI value and unit, for the hover text."""
    return "" if value is None else f"{value:.6g} {symbol(unit)}".strip()


def quantity_shown(value: Any, quantity: str | None, family: str | None,
                   choice: DisplayChoice, size: float | None = None) -> Shown:
    """A value (SI; years for ages) of ``quantity`` for a body of ``family`` in the chosen
    unit; ``size`` picks the unit where the family does not (the value itself by default)."""
    if not isinstance(value, int | float) or isinstance(value, bool):
        return {"text": "" if value is None else str(value), "unit": "", "si": ""}
    if quantity is None:  # a number in its own unit (W, W/m2, a ratio)
        return {"text": number(float(value)), "unit": "", "si": ""}
    unit = choice.unit(quantity, family, size if size is not None else float(value))
    si_unit = DisplayChoice("si").unit(quantity, family, None)
    return {"text": number(to_unit(float(value), unit)), "unit": symbol(unit),
            "si": _si_text(float(value), si_unit)}


def finding_shown(finding: Mapping[str, Any], choice: DisplayChoice) -> dict[str, Any]:
    """A finding with ``shown``: value, limit, unit and message in the chosen units. Value and
    limit share the unit the rule's message uses (chosen by the limit's size)."""
    value, limit, family = finding.get("value"), finding.get("limit"), finding.get("family")
    rule = RULES_BY_ID.get(finding.get("rule") or "")
    quantity = rule.quantity if rule else None
    written = _BY_SYMBOL.get(finding.get("unit") or "")
    factor = 1.0
    if quantity is None and written and choice != FAMILY_UNITS:  # e.g. M_sun, asked in kg
        quantity = _DIMENSION_QUANTITY.get(DISPLAY_UNITS[written].dimension)
        factor = DISPLAY_UNITS[written].to_si
    if quantity is None:
        plain = {"value": _plain(value), "limit": _plain(limit), "unit": finding.get("unit")}
        return {**finding, "shown": {**plain, "message": resay(finding.get("message"), choice),
                                     "si": ""}}
    size = limit if limit is not None else value
    def scaled(v: Any) -> float | None:
        return None if v is None else float(v) * factor
    shown_value = quantity_shown(scaled(value), quantity, family, choice, scaled(size))
    shown_limit = quantity_shown(scaled(limit), quantity, family, choice, scaled(size))
    return {**finding, "shown": {
        "value": shown_value["text"], "limit": shown_limit["text"],
        "unit": shown_value["unit"] or shown_limit["unit"],
        "message": resay(finding.get("message"), choice),
        "si": f"value {shown_value['si']}, limit {shown_limit['si']}"}}


def _plain(value: Any) -> str:
    return number(float(value)) if isinstance(value, int | float) else ""


def field_shown(field: str, value: Any, family: str | None, choice: DisplayChoice,
                size: float | None = None) -> Shown:
    """A canonical field or derived quantity of one body in the chosen unit (``size`` picks
    the unit of a distance, e.g. the body's orbit, so its distances share one unit)."""
    return quantity_shown(value, FIELD_QUANTITIES.get(field), family, choice, size)


def row_shown(row: dict[str, Any], fields: tuple[str, ...], choice: DisplayChoice
              ) -> dict[str, Any]:
    """A table row with ``shown[field]`` for each of ``fields`` (by the row's family)."""
    family = row.get("family")
    return {**row, "shown": {f: field_shown(f, row.get(f), family, choice) for f in fields}}
