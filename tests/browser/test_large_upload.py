"""A 1,000,000-body demo catalogue uploaded through the browser: the progress bar moves through
the bytes and then the checking stages, and the overview is reached.

The size is ``BODYCENSUS_BROWSER_BODIES`` (default 1,000,000).
"""

from __future__ import annotations

import os
import re
import time
from pathlib import Path

import pytest
from conftest import new_context
from playwright.sync_api import Browser, Error, Page, expect

from bodycensus.demo import write_demo

BODIES = int(os.environ.get("BODYCENSUS_BROWSER_BODIES", "1000000"))
READ_BAR = """() => ({bar: document.getElementById('upload-progress').value,
                     stage: document.getElementById('upload-stage').textContent})"""


@pytest.fixture(scope="module")
def big_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path, _truth = write_demo(tmp_path_factory.mktemp("big") / "sector-1m.csv", n_bodies=BODIES)
    return path


def _watch_progress(page: Page, screenshots: Path, limit_s: float) -> list[dict]:
    """Sample the progress bar until the page leaves the upload screen; keep two screenshots."""
    seen: list[dict] = []
    shots = {"upload": False, "checking": False}
    deadline = time.monotonic() + limit_s
    while "/catalogues/" not in page.url and time.monotonic() < deadline:
        try:
            state = page.evaluate(READ_BAR)
        except Error:  # the page is navigating to the overview
            break
        seen.append(state)
        phase = "checking" if state["stage"].startswith("Checking") else "upload"
        if 0 < state["bar"] < 1 and not shots[phase]:
            page.screenshot(path=screenshots / f"00-progress-{phase}.png")
            shots[phase] = True
        page.wait_for_timeout(100)
    return seen


def test_million_body_upload_shows_progress_and_reaches_the_overview(
        browser: Browser, base_url: str, big_file: Path, screenshots: Path) -> None:
    context = new_context(browser)
    page = context.new_page()
    try:
        page.goto(f"{base_url}/")
        page.set_input_files("#file-input", str(big_file))
        seen = _watch_progress(page, screenshots, limit_s=600)
        page.wait_for_url(re.compile(r"/catalogues/[^/?]+$"), timeout=600_000)
        expect(page.locator("#catalogue-status")).to_have_text("ready", timeout=60_000)
        expect(page.locator("#by-severity")).to_be_visible()
        page.screenshot(path=screenshots / "00-overview-1m.png", full_page=False)
        uploading = [s["bar"] for s in seen if s["stage"].startswith("Uploading")]
        checking = {s["stage"] for s in seen if s["stage"].startswith("Checking")}
        assert any(0 < bar < 1 for bar in uploading), "no partial byte progress was shown"
        assert len(checking) >= 2, f"the checking stages were not shown: {checking}"
        assert f"{BODIES:,}" in page.locator("body").inner_text()
    finally:
        context.close()
