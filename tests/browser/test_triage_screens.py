"""Triage and Compare in headless Chromium: a group (a rule within a label) decided on the
Triage screen is gone from "undecided only" in a fresh browser context, the name typed is kept
in a cookie, and the Compare screen draws two runs of the demo generator with other settings.
"""

from __future__ import annotations

import re
from pathlib import Path

import httpx
import pytest
from conftest import new_context
from playwright.sync_api import Browser, Page, expect
from web_support import wait_done

from bodycensus.demo import write_demo
from bodycensus.demo.population import GeneratorSettings

RULE, LABEL = "binary-barycentre", "red dwarf"  # a group the 3,000-body demo always has


def _upload(base: str, path: Path) -> str:
    """Upload a file through the API (the upload box has its own tests); the catalogue id."""
    with httpx.Client(base_url=base, timeout=120) as client:
        answer = client.post("/api/catalogues", params={"auto": "1"},
                             files={"file": (path.name, path.read_bytes(), "text/csv")})
        cat_id = answer.json()["id"]
        assert wait_done(client, cat_id, 120)["status"] == "ready"
    return cat_id


@pytest.fixture(scope="module")
def runs(base_url: str, tmp_path_factory: pytest.TempPathFactory) -> tuple[str, str]:
    """Two demo runs: the default generator, then heavier gas giants and no mass spike."""
    folder = tmp_path_factory.mktemp("triage")
    old, _ = write_demo(folder / "shoals.csv", n_bodies=3000, seed=7)
    new, _ = write_demo(folder / "shoals-next.csv", n_bodies=3000, seed=8,
                        settings=GeneratorSettings(giant_mass_factor=1.5, spike_share=0.0))
    return _upload(base_url, old), _upload(base_url, new)


def _group_row(page: Page) -> object:
    return page.locator("#groups-table tbody tr").filter(
        has=page.locator(f"input.pick[data-rule='{RULE}'][data-target='{LABEL}']"))


def test_a_decided_group_is_gone_from_undecided_only_in_a_fresh_context(
        browser: Browser, base_url: str, runs: tuple[str, str], screenshots: Path) -> None:
    triage = f"{base_url}/catalogues/{runs[0]}/triage"
    context = new_context(browser)
    try:
        page = context.new_page()
        page.goto(f"{triage}?undecided=1")
        row = _group_row(page)
        expect(row).to_have_count(1)
        row.locator("input.pick").check()
        page.select_option("#decide-status", "accepted")
        page.fill("#decide-form input[name=note]", "binary companions are expected")
        page.fill("#decide-by", "Ana Reviewer")
        page.screenshot(path=screenshots / "triage-1-group-chosen.png", full_page=True)
        with page.expect_navigation():
            page.click("#decide-submit")
        expect(_group_row(page)).to_have_count(0)  # the page reloads with undecided=1
        page.goto(triage)
        expect(_group_row(page).locator("td").last.locator(".decision-accepted")).to_be_visible()
        expect(_group_row(page)).to_contain_text("by Ana Reviewer")
        expect(page.locator("#decide-by")).to_have_value("Ana Reviewer")  # the cookie
        page.screenshot(path=screenshots / "triage-2-decided.png", full_page=True)
    finally:
        context.close()

    fresh = new_context(browser)
    try:
        page = fresh.new_page()
        page.goto(f"{triage}?undecided=1")
        expect(page.locator("#groups-table tbody tr").first).to_be_visible()
        expect(_group_row(page)).to_have_count(0)
        expect(page.locator("#decide-by")).to_have_value("")  # no cookie in a fresh context
        page.goto(f"{base_url}/catalogues/{runs[0]}/findings?rule={RULE}"
                  f"&label={LABEL.replace(' ', '+')}&undecided=1")
        expect(page.locator("#findings-total")).to_have_text("0")
        page.goto(f"{base_url}/catalogues/{runs[0]}/findings?rule={RULE}")
        expect(page.locator("#findings-table .decision-accepted").first).to_be_visible()
        page.screenshot(path=screenshots / "triage-3-fresh-context.png", full_page=True)
    finally:
        fresh.close()


def test_choosing_findings_on_the_findings_screen(page: Page, base_url: str,
                                                  runs: tuple[str, str]) -> None:
    page.goto(f"{base_url}/catalogues/{runs[1]}/findings?severity=impossible")
    first = page.locator("#findings-table tbody input.pick").first
    body = first.get_attribute("data-target")
    first.check()
    page.select_option("#decide-status", "confirmed")
    with page.expect_navigation():
        page.click("#decide-submit")
    decided = page.locator("#findings-table tbody tr", has_text=body or "").first
    expect(decided.locator(".decision-confirmed")).to_be_visible()


def test_compare_screen_draws_two_runs(page: Page, base_url: str, runs: tuple[str, str],
                                       screenshots: Path) -> None:
    page.goto(f"{base_url}/compare")
    page.select_option("#compare-old", runs[0])
    page.select_option("#compare-new", runs[1])
    page.click("#compare-form button[type=submit]")
    page.wait_for_url(re.compile(r"/compare\?old="))
    page.wait_for_selector("#figure[data-drawn=true]", timeout=60_000)
    expect(page.locator("#compare-bodies")).to_contain_text("Changed")
    shifted = page.locator("#shifts-table tbody tr", has_text="shifted")
    expect(shifted.first).to_contain_text("gas giant")
    page.screenshot(path=screenshots / "compare.png", full_page=True)
    page.locator("#shift-figure").screenshot(path=screenshots / "compare-figure.png")
    traces = page.evaluate("() => document.getElementById('figure').data.map(t => t.name)")
    assert traces == ["old: shoals.csv", "new: shoals-next.csv"]
