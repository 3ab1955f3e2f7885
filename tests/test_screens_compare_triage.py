"""The data of the Compare and Triage screens (screens/compare.py, screens/triage.py) on a real
store: comparisons are kept and read back, the chosen histogram, groups and selections."""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from web_support import SyncClient, api_settings, asgi_client, upload, wait_done

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.screens import compare, triage
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.errors import BadInput
from bodycensus.storage.decisions import Decision
from bodycensus.storage.store import Store

HEADER = "id,type,orbits,system,mass (earth_mass),radius_km,a (au),e\n"
# Denser than pure iron at 1 M_earth (Seager et al. 2007): impossible.
ROWS = "sol,yellow dwarf star,,Sol,332946,695700,,\n" + "".join(
    f"lead{i},terrestrial planet,sol,Sol,1,4000,{i + 1},0.01\n" for i in range(3))


@pytest.fixture(scope="module")
def stored(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[Store, list[str]]]:
    """The app's store with two ready catalogues (the second has one body more)."""
    app = create_app(api_settings(tmp_path_factory.mktemp("data")))
    with asgi_client(app) as client:
        ids = [_ready(client, text) for text in
               (ROWS, ROWS + "lead9,terrestrial planet,sol,Sol,1,4000,9,0.01\n")]
        yield app.state.store, ids


def _ready(client: SyncClient, text: str) -> str:
    cat_id = upload(client, "u.csv", (HEADER + text).encode(), auto=True).json()["id"]
    assert wait_done(client, cat_id)["status"] == "ready"
    return cat_id


def test_a_comparison_is_kept_and_read_back(stored: tuple[Store, list[str]]) -> None:
    store, (old, new) = stored
    first = compare.comparison(store, old, new)
    assert compare.comparison_file(store, old, new).is_file()
    assert compare.comparison(store, old, new) == first
    assert first["bodies"]["added"] == 1
    with pytest.raises(BadInput):
        compare.comparison(store, old, old)
    assert compare.compare_url(old, new, "x y", "mass") == \
        f"/compare?old={old}&new={new}&label=x+y&field=mass"
    assert compare.chosen_shift(first, "none", "none") is None  # too few systems to test


def test_groups_counts_and_selection(stored: tuple[Store, list[str]]) -> None:
    store, (old, _new) = stored
    cat_dir = store.ready_dir(old)
    decisions = [Decision("finding", "denser-than-iron", "lead0", "accepted")]
    groups = triage.triage_groups(cat_dir, decisions, ViewState())
    iron = next(g for g in groups["items"] if g["rule"] == "denser-than-iron")
    assert (iron["target"], iron["findings"], iron["undecided"], iron["accepted"]) == \
        ("terrestrial planet", 3, 2, 1)
    by_system = triage.triage_groups(cat_dir, decisions, ViewState(by="system"))
    assert {g["target"] for g in by_system["items"]} == {"Sol"}
    sol = triage.system_groups(cat_dir, decisions, "Sol")
    assert [(g["rule"], g["findings"], g["undecided"]) for g in sol
            if g["rule"] == "denser-than-iron"] == [("denser-than-iron", 3, 2)]
    assert triage.system_groups(cat_dir, decisions, "Nowhere") == []
    counts = triage.triage_counts(cat_dir, decisions)
    assert counts["accepted"] == 1 and counts["undecided"] == counts["findings"] - 1
    picked = triage.selection(cat_dir, ViewState(rule=("denser-than-iron",), undecided=True),
                              decisions)
    assert sorted(picked) == [("lead1", "denser-than-iron"), ("lead2", "denser-than-iron")]
    assert triage.stale_decisions(cat_dir, [*decisions, Decision(
        "label", "kepler-mismatch", "moon", "accepted")])[0].target == "moon"
