"""Browser-test set-up: the real app in uvicorn on 127.0.0.1, Debian's Chromium via Playwright,
every request outside loopback aborted, and a folder for the screenshots of each screen.

Screenshots go to ``$BODYCENSUS_SCREENSHOTS`` or ``test-artifacts/screenshots/`` (gitignored).
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path
from urllib.parse import urlsplit

import pytest
from playwright.sync_api import Browser, BrowserContext, Page, Route, sync_playwright
from web_support import live_server

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.settings import Settings

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync",
        "--host-resolver-rules=MAP * 127.0.0.1:9, EXCLUDE localhost, EXCLUDE 127.0.0.1"]
LOCAL_HOSTS = {"127.0.0.1", "localhost"}


def pytest_collection_modifyitems(items: list[pytest.Item]) -> None:
    """Every test in this folder is a browser test."""
    for item in items:
        if "tests/browser/" in str(item.fspath).replace(os.sep, "/"):
            item.add_marker(pytest.mark.browser)


@pytest.fixture(scope="session")
def screenshots() -> Path:
    """The folder this run writes its screenshots to."""
    default = Path(__file__).resolve().parents[2] / "test-artifacts" / "screenshots"
    folder = Path(os.environ.get("BODYCENSUS_SCREENSHOTS", default))
    folder.mkdir(parents=True, exist_ok=True)
    return folder


@pytest.fixture(scope="session")
def base_url(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """The dashboard served by uvicorn on a free loopback port, with an empty data directory."""
    app = create_app(Settings(data_dir=tmp_path_factory.mktemp("browser-data")))
    with live_server(app) as url:
        yield url


@pytest.fixture(scope="session")
def browser() -> Iterator[Browser]:
    """Headless Chromium from the Debian package (never a downloaded browser)."""
    if not Path(CHROMIUM).exists():
        pytest.skip(f"{CHROMIUM} is missing; install Debian's chromium package")
    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        try:
            yield browser
        finally:
            browser.close()


def _loopback_only(route: Route) -> None:
    """Let requests to this machine (and file:// reports) through; abort everything else."""
    url = urlsplit(route.request.url)
    if url.scheme in ("file", "data", "blob") or url.hostname in LOCAL_HOSTS:
        route.continue_()
    else:
        route.abort()


def new_context(browser: Browser) -> BrowserContext:
    """A fresh browser context (no shared cookies or storage) confined to loopback."""
    context = browser.new_context(viewport={"width": 1360, "height": 900}, accept_downloads=True)
    context.route("**/*", _loopback_only)
    return context


@pytest.fixture(scope="module")
def page(browser: Browser) -> Iterator[Page]:
    """One page shared by a module's read-only checks (plotly.js compiles once per load)."""
    context = new_context(browser)
    page = context.new_page()
    dialogs: list[str] = []  # an alert() would mean catalogue text ran as script
    page.on("dialog", lambda dialog: (dialogs.append(dialog.message), dialog.dismiss()))
    try:
        yield page
    finally:
        context.close()
    assert dialogs == [], f"a page opened a dialog: {dialogs}"
