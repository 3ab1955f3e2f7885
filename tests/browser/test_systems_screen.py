"""The Systems screens in headless Chromium: a small demo uploaded through the upload box, the
list of systems (a hostile system name shown as text) and the tree of the most serious one.
"""

from __future__ import annotations

import csv
import re
from pathlib import Path

import pytest
from playwright.sync_api import Page, expect

from bodycensus.demo import write_demo

HOSTILE_SYSTEM = "<img src=x onerror=alert(1)>"


@pytest.fixture(scope="module")
def catalogue(page: Page, base_url: str, tmp_path_factory: pytest.TempPathFactory) -> str:
    """Upload the 3,000-body demo (as the dashboard test) plus one star whose system name is HTML;
    the catalogue's id."""
    path, _truth = write_demo(tmp_path_factory.mktemp("systems") / "sector.csv", n_bodies=3000)
    with path.open("r+", newline="", encoding="utf-8") as handle:
        header = next(csv.reader(handle))
        handle.seek(0, 2)
        row = dict.fromkeys(header, "")
        row.update({"id": "odd-star", "system": HOSTILE_SYSTEM, "mass (earth_mass)": "332946",
                    "radius_km": "695700"})
        csv.writer(handle).writerow([row[c] for c in header])
    page.goto(f"{base_url}/")
    page.set_input_files("#file-input", str(path))
    page.wait_for_url(re.compile(r"/catalogues/[^/?]+$"), timeout=60_000)
    expect(page.locator("#by-severity")).to_be_visible(timeout=60_000)
    return page.url.rstrip("/").rsplit("/", 1)[1]


def test_systems_list_and_one_system(page: Page, catalogue: str, screenshots: Path) -> None:
    page.get_by_role("link", name="Systems", exact=True).click()
    expect(page.locator("#systems-table .badge").first).to_be_visible()
    page.screenshot(path=screenshots / "09-systems.png", full_page=True)
    page.goto(f"{page.url}?limit=1000")  # the hostile system has no finding: near the end
    expect(page.locator("#systems-table")).to_contain_text(HOSTILE_SYSTEM)  # as text
    assert page.locator("img").count() == 0
    page.go_back()
    page.locator("#systems-table a.system-link").first.click()
    expect(page.locator("#system-tree")).to_be_visible()
    body_link = page.locator(f"#system-tree a[href^='/catalogues/{catalogue}/bodies/']").first
    expect(body_link).to_be_visible()
    expect(page.locator("#system-tree td.depth-1").first).to_be_visible()
    page.screenshot(path=screenshots / "10-system.png", full_page=True)
    body_link.click()
    expect(page.locator("#body-system")).to_be_visible()
