"""The state of a view in the URL query: one dataclass, one parser, one builder.

Pages and the API both read filters with ``ViewState.from_query`` and build links with
``ViewState.to_query``, so a copied address reproduces the view exactly. Lists are repeated keys
(``severity=error&severity=impossible``), because labels may contain commas.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, fields, replace
from typing import Any, cast
from urllib.parse import parse_qsl, urlencode

from bodycensus.errors import BadInput
from bodycensus.science.display_units import DISPLAY_UNITS, DisplayChoice
from bodycensus.science.severity import SEVERITIES

SORT_KEYS: tuple[str, ...] = ("severity", "rule", "body", "name", "label", "family", "value",
                              "limit", "margin", "_row")
# The Bodies list's orders: the file's own by default, then body columns and the worst finding.
ORDER_KEYS: tuple[str, ...] = ("_row", "id", "name", "label", "family", "system", "mass",
                               "radius", "semi_major_axis", "worst", "findings")
UNIT_SYSTEMS = ("family", "si")
MAX_LIMIT = 1000
_MAX_TEXT = 200
_MAX_VALUES = 200
_LISTS = ("severity", "rule", "label", "family", "unit")
_FILTER_LISTS = ("severity", "rule", "label", "family")
_FLOATS = ("min_value", "max_value", "min_margin", "max_margin")
_SLUGS = ("diagram", "region_of", "screen")
_SLUG = re.compile(r"^[a-z0-9_-]{1,64}$")
GROUPINGS = ("label", "system")  # the Triage screen's groups: a rule within a label or system
_UNIT_PIN = re.compile(r"^(?P<dimension>[a-z]+):(?P<unit>[A-Za-z0-9_/]+)$")
_NUMBER = r"-?\d+(?:\.\d+)?(?:[eE][+-]?\d+)?"
_REGION = re.compile(rf"^{_NUMBER}(,{_NUMBER}){{1,3}}$")
_LASSO = re.compile(rf"^{_NUMBER} {_NUMBER}(;{_NUMBER} {_NUMBER}){{2,99}}$")


@dataclass(frozen=True)
class ViewState:
    """Filters, order, page and on-screen choices of a view; defaults are left out of URLs."""

    severity: tuple[str, ...] = ()
    rule: tuple[str, ...] = ()
    label: tuple[str, ...] = ()
    family: tuple[str, ...] = ()
    min_value: float | None = None
    max_value: float | None = None
    min_margin: float | None = None
    max_margin: float | None = None
    undecided: bool = False  # only findings no triage decision covers
    sort: str = "severity"  # a findings column; a leading '-' sorts descending
    limit: int = 50
    offset: int = 0
    diagram: str | None = None  # the diagram shown: a key of diagrams.registry, e.g. "roche"
    field: str | None = None  # the field of the distribution diagram
    body: str | None = None  # the selected body
    by: str | None = None  # how the Triage screen groups findings: "label" (default), "system"
    units: str = "family"  # family: each quantity in its family's unit; si: SI throughout
    unit: tuple[str, ...] = ()  # one unit pinned per dimension, e.g. "mass:jupiter_mass"
    q: str | None = None  # a search by id or name
    region_of: str | None = None  # the diagram a selected region was drawn on
    region: str | None = None  # its box in the diagram's coordinates: "x0,x1" or "x0,x1,y0,y1"
    lasso: str | None = None  # or its lasso, "x y;x y;..." in the same coordinates
    order: str = "_row"  # the Bodies list's order; a leading '-' sorts descending
    screen: str | None = None  # the screen a saved view opens when its query alone cannot say

    @classmethod
    def from_query(cls, query: str | Mapping[str, Any] | Any) -> ViewState:
        """Parse a query string, starlette ``QueryParams`` or mapping; BadInput on a bad value."""
        values: dict[str, list[str]] = {}
        for key, value in _pairs(query):
            if value != "" and key in cls.__dataclass_fields__:
                values.setdefault(key, []).append(value)
        return cls(**{key: _parse(key, raw) for key, raw in values.items()})

    def to_query(self) -> str:
        """The query string of this view, without defaults, in a stable order."""
        pairs: list[tuple[str, str]] = []
        for f in fields(self):
            value = getattr(self, f.name)
            if value == f.default:
                continue
            if f.name in _LISTS:
                pairs.extend((f.name, v) for v in value)
            elif isinstance(value, bool):
                pairs.append((f.name, "1"))
            else:
                pairs.append((f.name, repr(value) if isinstance(value, float) else str(value)))
        return urlencode(pairs)

    def with_(self, **changes: Any) -> ViewState:
        """A copy with some choices changed (e.g. the next page, another severity)."""
        return replace(self, **changes)

    def sort_key(self) -> tuple[str, bool]:
        """The column to sort by and whether descending."""
        return self.sort.removeprefix("-"), self.sort.startswith("-")

    @property
    def display(self) -> DisplayChoice:
        """The units chosen for showing values (``units`` and ``unit`` in the URL)."""
        return DisplayChoice(self.units, self.pinned_units)

    def order_key(self) -> tuple[str, bool]:
        """The Bodies list's column to sort by and whether descending."""
        return self.order.removeprefix("-"), self.order.startswith("-")

    @property
    def filters(self) -> dict[str, Any]:
        """The active filters only (for showing them as removable chips)."""
        chosen = {k: getattr(self, k) for k in _FILTER_LISTS + _FLOATS
                  if getattr(self, k) not in ((), None)}
        return {**chosen, "undecided": True} if self.undecided else chosen

    @property
    def finding_filters(self) -> bool:
        """Whether any filter is on a finding (severity, rule, value, margin, undecided) rather
        than a body's label, family or region."""
        return bool(self.severity or self.rule or self.undecided) or any(
            getattr(self, k) is not None for k in _FLOATS)

    @property
    def pinned_units(self) -> dict[str, str]:
        """The units pinned per dimension (``unit=mass:jupiter_mass``)."""
        return dict(pin.split(":", 1) for pin in self.unit)


def _pairs(query: str | Mapping[str, Any] | Any) -> Iterable[tuple[str, str]]:
    """(key, value) pairs from any of the accepted query forms."""
    if isinstance(query, str):
        return parse_qsl(query.lstrip("?"), keep_blank_values=True)
    if hasattr(query, "multi_items"):  # starlette's QueryParams
        return cast(Iterable[tuple[str, str]], query.multi_items())
    out: list[tuple[str, str]] = []
    for key, value in query.items():
        seq = value if isinstance(value, list | tuple) else [value]
        out.extend((key, str(v)) for v in seq if v is not None)
    return out


def _parse(key: str, raw: list[str]) -> Any:
    """One field's value from its raw strings."""
    if key in _LISTS:
        return _parse_list(key, raw)
    text = raw[-1]
    if key in _FLOATS:
        return _parse_float(key, text)
    if key == "undecided":
        return _parse_flag(key, text)
    if key in ("limit", "offset"):
        return _parse_int(key, text, 1 if key == "limit" else 0, MAX_LIMIT if key == "limit"
                          else 10**12)
    if key in ("sort", "order"):
        keys = SORT_KEYS if key == "sort" else ORDER_KEYS
        if text.removeprefix("-") not in keys:
            raise BadInput(f"{key}={text[:40]!r} is unknown; use one of {', '.join(keys)} "
                           "(prefix '-' for descending)")
        return text
    if key == "units" and text not in UNIT_SYSTEMS:
        raise BadInput(f"units={text[:40]!r} is unknown; use one of {', '.join(UNIT_SYSTEMS)}")
    for name, pattern, example in (("region", _REGION, "region=0.1,2.5,-1,3"),
                                   ("lasso", _LASSO, "lasso=0 0;1 0;1 1")):
        if key == name and not pattern.match(text):
            raise BadInput(f"{key}={text[:40]!r} must be numbers as in {example}")
    return _parse_text(key, text)


def _parse_list(key: str, raw: list[str]) -> tuple[str, ...]:
    """A repeated key: distinct values in order, checked where the vocabulary is fixed."""
    if len(raw) > _MAX_VALUES:
        raise BadInput(f"{key}: at most {_MAX_VALUES} values")
    values = tuple(dict.fromkeys(_parse_text(key, v) for v in raw))
    if key == "unit":
        for pin in values:
            _check_pin(pin)
    if key == "severity":
        unknown = [v for v in values if v not in SEVERITIES]
        if unknown:
            raise BadInput(f"severity={unknown[0][:40]!r} is unknown; use one of "
                           f"{', '.join(SEVERITIES)}")
    return values


def _parse_float(key: str, text: str) -> float:
    """A finite number."""
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value):
        raise BadInput(f"{key}={text[:40]!r} is not a finite number, e.g. {key}=0.5")
    return value


def _parse_flag(key: str, text: str) -> bool:
    """An on/off choice: 1, true, on or yes; 0, false, off or no."""
    lowered = text.strip().lower()
    if lowered not in ("1", "true", "on", "yes", "0", "false", "off", "no"):
        raise BadInput(f"{key}={text[:40]!r} must be 1 or 0")
    return lowered in ("1", "true", "on", "yes")


def _parse_int(key: str, text: str, low: int, high: int) -> int:
    """An integer within [low, high]."""
    if not re.fullmatch(r"\d{1,13}", text.strip()) or not low <= int(text) <= high:
        raise BadInput(f"{key}={text[:40]!r} must be a whole number from {low} to {high}")
    return int(text)


def _parse_text(key: str, text: str) -> str:
    """A short string; diagram and screen names are restricted to a slug."""
    limit = 4000 if key == "lasso" else _MAX_TEXT
    if len(text) > limit:
        raise BadInput(f"{key}: at most {limit} characters")
    if key in _SLUGS and not _SLUG.match(text):
        raise BadInput(f"{key}={text[:40]!r} must be lower-case letters, digits, '-' or '_'")
    if key == "by" and text not in GROUPINGS:
        raise BadInput(f"by={text[:40]!r} is unknown; use one of {', '.join(GROUPINGS)}")
    return text


def _check_pin(pin: str) -> None:
    """A unit pinned to a dimension must be a unit of that dimension."""
    match = _UNIT_PIN.match(pin)
    unit = DISPLAY_UNITS.get(match["unit"]) if match else None
    if match is None or unit is None or unit.dimension != match["dimension"]:
        raise BadInput(f"unit={pin[:40]!r} must be dimension:unit of that dimension, e.g. "
                       "unit=mass:jupiter_mass or unit=length:au")
