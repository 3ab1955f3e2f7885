"""Pieces the dashboard's screens share: the Units menu, the clean address of a submitted
form, the orders offered and how a rule reads in a drop-down."""

from __future__ import annotations

from typing import Any
from urllib.parse import quote

from fastapi import Request
from fastapi.responses import RedirectResponse, Response

from bodycensus.dashboard.screens.viewstate import SORT_KEYS, ViewState
from bodycensus.science.display_units import DISPLAY_UNITS, symbol

# Units a person may pin per dimension in the Units menu (the rest stay by family or SI).
PINNABLE = {"mass": ("kg", "earth_mass", "jupiter_mass", "solar_mass"),
            "length": ("m", "km", "earth_radius", "jupiter_radius", "solar_radius", "au")}


def units_menu(state: ViewState, request: Request) -> dict[str, Any]:
    """The Units menu of a screen: the current choice, the pins offered per dimension, and the
    rest of the address kept as hidden fields so a change keeps every other choice."""
    keep = [(k, v) for k, v in request.query_params.multi_items()
            if k not in ("units", "unit", "offset") and v != ""]
    pins = {dim: [(u, symbol(u)) for u in units if u in DISPLAY_UNITS]
            for dim, units in PINNABLE.items()}
    return {"keep": keep, "system": state.units, "pinned": state.pinned_units, "pins": pins}


def blanks_dropped(request: Request) -> Response | None:
    """A redirect to the same address without its empty parameters (a form submits every
    field; an address keeps only the choices made), or None when there are none."""
    pairs = request.query_params.multi_items()
    if not any(v == "" for _, v in pairs):
        return None
    kept = "&".join(f"{quote(k, safe='')}={quote(v, safe='')}" for k, v in pairs if v != "")
    return RedirectResponse(f"{request.url.path}{'?' + kept if kept else ''}", status_code=303)


def sort_groups() -> list[tuple[str, list[tuple[str, str]]]]:
    """The Findings list's orders, grouped: by seriousness, then by a column either way."""
    columns = [k for k in SORT_KEYS if k != "severity"]
    words = {"_row": "row in the file", "body": "body id"}
    return [("Seriousness", [("severity", "most serious first, largest margin first"),
                             ("-severity", "least serious first")]),
            ("A column, smallest or A first",
             [(k, f"{words.get(k, k)}, smallest or A first") for k in columns]),
            ("A column, largest or Z first",
             [(f"-{k}", f"{words.get(k, k)}, largest or Z first") for k in columns])]


def rule_option(rule: dict[str, Any]) -> str:
    """A rule in the filter's drop-down: its id and its findings at each severity."""
    counts = ", ".join(f"{n:,} {s}" for s, n in rule["counts"].items())
    return f"{rule['rule']} ({counts})"
