"""The registry of diagrams: one record per diagram, one vocabulary of keys, and every consumer
(aggregates, the chooser, the report, the API) lists exactly the registry."""

from __future__ import annotations

from pathlib import Path

from web_support import asgi_client

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.screens.page_context import diagram_links
from bodycensus.dashboard.screens.report import figures_for_view
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.dashboard.settings import Settings
from bodycensus.diagrams import registry
from bodycensus.science.rules import RULE_IDS

# Addresses that saved views, links and the browser tests already use.
URL_KEYS = ("density", "mass-radius", "roche", "orbits", "distributions")


def test_every_diagram_is_complete() -> None:
    assert len(set(registry.KEYS)) == len(registry.DIAGRAMS)
    for diagram in registry.DIAGRAMS:
        assert diagram.title and diagram.caption.endswith("."), diagram.key
        assert callable(diagram.aggregate) and callable(diagram.figure), diagram.key
        assert diagram.axes, diagram.key
        assert ViewState.from_query(f"diagram={diagram.key}").diagram == diagram.key


def test_every_rule_a_diagram_draws_is_a_rule() -> None:
    for diagram in registry.DIAGRAMS:
        assert set(diagram.rules) <= set(RULE_IDS), diagram.key


def test_the_addresses_in_use_still_name_their_diagram() -> None:
    assert set(URL_KEYS) <= set(registry.KEYS)
    for key in URL_KEYS:
        assert registry.get(key).key == key


def test_an_unknown_or_missing_key_shows_the_first_diagram() -> None:
    assert registry.get(None) is registry.get("no-such-diagram") is registry.DIAGRAMS[0]


def test_the_chooser_lists_exactly_the_registry() -> None:
    def url(cat_id: str, *parts: str, state: ViewState) -> str:
        return f"/{cat_id}/{'/'.join(parts)}?{state.to_query()}"

    links = diagram_links("c", url, current="roche")
    assert [(link["key"], link["title"]) for link in links] == [
        (d.key, d.title) for d in registry.DIAGRAMS]
    assert [link["key"] for link in links if link["current"]] == ["roche"]
    assert links[1]["href"] == "/c/diagrams?diagram=mass-radius"


def test_a_report_without_a_diagram_shows_every_diagram() -> None:
    figures = figures_for_view({"diagrams": {}}, ViewState())
    assert [f["key"] for f in figures] == list(registry.KEYS)
    assert [f["key"] for f in figures_for_view({}, ViewState(diagram="roche"))] == ["roche"]


def test_the_api_lists_exactly_the_registry(tmp_path: Path) -> None:
    with asgi_client(create_app(Settings(data_dir=tmp_path))) as client:
        listed = client.get("/api/diagrams").json()
    assert [d["key"] for d in listed] == list(registry.KEYS)
    roche = next(d for d in listed if d["key"] == "roche")
    assert roche["rules"] == list(registry.get("roche").rules) and roche["caption"]
