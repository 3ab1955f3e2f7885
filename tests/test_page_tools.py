"""Pieces the screens share (routes/page_tools.py): the orders offered, a rule in a drop-down,
the clean address of a submitted form and the Units menu keeping the rest of the address."""

from __future__ import annotations

from starlette.requests import Request

from bodycensus.dashboard.routes.page_tools import (
    blanks_dropped,
    rule_option,
    sort_groups,
    units_menu,
)
from bodycensus.dashboard.screens.viewstate import SORT_KEYS, ViewState


def _request(query: str) -> Request:
    return Request({"type": "http", "method": "GET", "path": "/catalogues/c/findings",
                    "query_string": query.encode(), "headers": []})


def test_every_order_is_offered_once_in_its_group() -> None:
    keys = [key for _, options in sort_groups() for key, _ in options]
    assert sorted(keys) == sorted([*SORT_KEYS, *[f"-{k}" for k in SORT_KEYS]])
    assert [g for g, _ in sort_groups()][0] == "Seriousness"


def test_a_rule_reads_with_its_counts_by_severity() -> None:
    rule = {"rule": "inside-fluid-roche", "counts": {"unstable": 1, "note": 1234}}
    assert rule_option(rule) == "inside-fluid-roche (1 unstable, 1,234 note)"


def test_a_form_with_empty_fields_is_sent_to_its_clean_address() -> None:
    answer = blanks_dropped(_request("rule=&severity=error&min_value=&label=a+b"))
    assert answer is not None and answer.status_code == 303
    assert answer.headers["location"] == "/catalogues/c/findings?severity=error&label=a%20b"
    assert blanks_dropped(_request("severity=error")) is None


def test_the_units_menu_keeps_every_other_choice() -> None:
    state = ViewState.from_query("severity=error&units=si&unit=mass:jupiter_mass&offset=50")
    menu = units_menu(state, _request("severity=error&units=si&unit=mass:jupiter_mass&offset=50"))
    assert menu["keep"] == [("severity", "error")] and menu["system"] == "si"
    assert menu["pinned"] == {"mass": "jupiter_mass"}
    assert ("jupiter_mass", "M_jup") in menu["pins"]["mass"]
