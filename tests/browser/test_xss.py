"""Catalogue text is data, not markup, and the dashboard refuses cross-site requests, in
headless Chromium.

A server with an access token: the browser logs in through the login page, uploads a demo
catalogue whose ids, names, labels and an extra column carry script payloads (through the
dashboard's own upload box, so its scripts must pass the cross-site checks), then visits every
screen and every diagram and hovers a flagged body. No dialog may open, no injected element may
exist, no Content-Security-Policy violation may occur, and the payloads show as text. The CSP
itself is shown to block an inline handler, and a page on another origin cannot upload or post.
"""

from __future__ import annotations

import csv
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any
from urllib.parse import quote

import httpx
import pytest
from conftest import new_context
from playwright.sync_api import Browser, Page, expect
from web_support import live_server

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.settings import Settings
from bodycensus.demo import write_demo

TOKEN = "browser-token-12345"
LABEL = "<img src=x onerror=alert(1)>"
NAME = "<script>alert(2)</script>"
FLAGGED_ID = "<svg onload=alert(3)>"
COLUMN = "<img src=x onerror=alert(4)>"
CELL = "<script>alert(8)</script>"
MOON_ID = "<b id=pwn-moon>m</b>"
HOSTILE = [  # id, name, type, mass (earth masses), radius (km), orbit (au), parent
    (FLAGGED_ID, NAME, "terrestrial world", "10", "2000", "1.0", "star"),
    ('"><img src=x onerror=alert(5)>', "<img src=x onerror=alert(6)>", LABEL, "1", "6371",
     "1.0", "star"),
    ("javascript:alert(7)", NAME, LABEL, "-1", "6371", "1.0", "star"),
    (MOON_ID, NAME, "icy moon", "0.01", "1500", "0.00001", "giant"),
]
CLEAN = """() => ({
  injected: [...document.querySelectorAll('img[src="x"], [onerror], [onload], b[id^="pwn"], '
    + 'script:not([src]):not([type="application/json"])')].map(e => e.outerHTML.slice(0, 80)),
  csp: window.__csp || [],
  ran: window.__ran || null,
})"""
RECORD_CSP = """document.addEventListener('securitypolicyviolation',
  e => (window.__csp = window.__csp || []).push(e.violatedDirective + ' ' + e.blockedURI));"""
HOVER_POINT = """(id) => {
  const gd = document.getElementById('figure');
  for (const t of gd.data) {
    if (t.meta !== 'flagged' || !t.customdata) continue;
    const i = t.customdata.findIndex(c => (Array.isArray(c) ? c[0] : c) === id);
    if (i < 0) continue;
    const xa = gd._fullLayout['xaxis' + (t.xaxis || 'x').slice(1)];
    const ya = gd._fullLayout['yaxis' + (t.yaxis || 'y').slice(1)];
    const box = gd.getBoundingClientRect();
    return {x: box.left + xa._offset + xa.l2p(xa.d2l(t.x[i])),
            y: box.top + ya._offset + ya.l2p(ya.d2l(t.y[i]))};
  }
  return null;
}"""


@pytest.fixture(scope="module")
def hostile_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A 2,000-body demo catalogue plus bodies whose text is markup, and a markup column."""
    path, _ = write_demo(tmp_path_factory.mktemp("xss") / "hostile.csv", n_bodies=2000)
    with path.open(newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    star = next(r["id"] for r in rows if "dwarf" in r["type"] and not r["orbits"])
    giant = next(r["id"] for r in rows if "gas giant" in r["type"])
    for body_id, name, label, mass, radius, a, parent in HOSTILE:
        rows.append({"id": body_id, "name": name, "type": label, "mass (earth_mass)": mass,
                     "radius_km": radius, "a (au)": a, "orbits": star if parent == "star"
                     else giant, COLUMN: CELL})
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, [*rows[0].keys(), COLUMN], restval="")
        writer.writeheader()
        writer.writerows(rows)
    return path


@pytest.fixture(scope="module")
def guarded_url(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """The dashboard with an access token, in uvicorn on 127.0.0.1."""
    settings = Settings(data_dir=tmp_path_factory.mktemp("xss-data"), token=TOKEN)
    with live_server(create_app(settings)) as url:
        yield url


def _assert_clean(page: Page, *texts: str) -> None:
    """No injected element, no CSP violation, no script ran; ``texts`` show as text."""
    state = page.evaluate(CLEAN)
    assert state == {"injected": [], "csp": [], "ran": None}, (page.url, state)
    shown = page.locator("body").inner_text()
    for text in texts:
        assert text in shown, (page.url, text)


@pytest.fixture(scope="module")
def catalogue(page: Page, guarded_url: str, hostile_file: Path) -> str:
    """Log in through the login page, upload through the upload box; the catalogue's id."""
    page.add_init_script(RECORD_CSP)
    page.goto(f"{guarded_url}/")
    page.wait_for_url(re.compile(r"/login\?next=/$"))
    page.fill("#token-input", TOKEN)
    page.click("#login-submit")
    page.wait_for_url(f"{guarded_url}/")
    page.set_input_files("#file-input", str(hostile_file))
    page.wait_for_url(re.compile(r"/catalogues/[^/?]+$"), timeout=60_000)
    expect(page.locator("#by-severity")).to_be_visible(timeout=60_000)
    return page.url.rstrip("/").rsplit("/", 1)[1]


def test_screens_show_markup_as_text(page: Page, guarded_url: str, catalogue: str) -> None:
    base = f"{guarded_url}/catalogues/{catalogue}"
    _assert_clean(page, LABEL)  # the overview
    for url, texts in [
        (f"{guarded_url}/", ()),
        (f"{base}/findings", ()),
        (f"{base}/findings?label={quote(LABEL)}", (LABEL, "javascript:alert(7)")),
        (f"{base}/findings?severity=impossible&label=terrestrial+world", (FLAGGED_ID,)),
        (f"{base}/bodies/{quote(FLAGGED_ID, safe='')}", (FLAGGED_ID, NAME, COLUMN, CELL)),
        (f"{base}/bodies/{quote(MOON_ID, safe='')}", (MOON_ID, NAME)),
        (f"{base}/bodies/javascript:alert(7)", ("javascript:alert(7)", LABEL)),
    ]:
        page.goto(url)
        _assert_clean(page, *texts)
    links = page.eval_on_selector_all("a[href]", "els => els.map(e => e.href)")
    assert not [h for h in links if h.lower().startswith("javascript:")], links


@pytest.mark.parametrize("diagram", ["density", "mass-radius", "roche", "orbits",
                                     "tidal-locking", "distributions"])
def test_every_diagram_keeps_markup_as_text(page: Page, guarded_url: str, catalogue: str,
                                            diagram: str) -> None:
    for label in ("", LABEL, "terrestrial world"):
        query = f"diagram={diagram}" + (f"&label={quote(label)}" if label else "")
        page.goto(f"{guarded_url}/catalogues/{catalogue}/diagrams?{query}")
        page.wait_for_selector("#figure[data-drawn=true]", timeout=30_000)
        _assert_clean(page)


def test_hover_text_shows_markup_as_text(page: Page, guarded_url: str, catalogue: str) -> None:
    page.goto(f"{guarded_url}/catalogues/{catalogue}/diagrams?diagram=density"
              "&label=terrestrial+world")
    page.wait_for_selector("#figure[data-drawn=true]", timeout=30_000)
    point = page.evaluate(HOVER_POINT, FLAGGED_ID)
    assert point is not None, "the hostile body is not among the flagged points"
    page.mouse.move(point["x"], point["y"])
    hover = page.locator("#figure .hoverlayer .hovertext")
    expect(hover).to_contain_text(FLAGGED_ID, timeout=10_000)
    assert page.locator("#figure .hoverlayer image, #figure .hoverlayer img").count() == 0
    _assert_clean(page)


def test_saved_view_of_hostile_label_and_mapping_step(page: Page, guarded_url: str,
                                                      catalogue: str, tmp_path: Path) -> None:
    page.goto(f"{guarded_url}/catalogues/{catalogue}/findings?label={quote(LABEL)}")
    page.click("#save-view")
    page.fill("#save-form input[name=title]", NAME)
    page.fill("#save-form textarea[name=note]", LABEL)
    page.click("#save-submit")
    link = page.locator("#saved-url")
    expect(link).to_be_visible()
    page.goto(link.get_attribute("href") or "")
    expect(page.locator("#saved-title")).to_have_text(NAME)
    _assert_clean(page, NAME, LABEL)
    source = tmp_path / "plain.csv"
    source.write_text(f"id,kind,m,r,{COLUMN}\na,{LABEL},1,6371,{CELL}\nb,{LABEL},2,7000,x\n",
                      encoding="utf-8")
    page.goto(f"{guarded_url}/")
    page.set_input_files("#file-input", str(source))
    expect(page.locator("#mapping-form")).to_be_visible(timeout=30_000)
    _assert_clean(page, LABEL, COLUMN)


def test_the_policy_blocks_an_injected_inline_handler(page: Page, guarded_url: str,
                                                      catalogue: str) -> None:
    page.goto(f"{guarded_url}/catalogues/{catalogue}")
    page.evaluate("document.body.insertAdjacentHTML('beforeend', "
                  "'<img id=probe src=/nothing onerror=\"window.__ran = 1\">')")
    page.wait_for_function("(window.__csp || []).length > 0", timeout=5_000)
    assert page.evaluate("window.__ran || null") is None
    page.evaluate("document.getElementById('probe').remove(); window.__csp = []")


EVIL_PAGE = """<!doctype html><body><p id=done>no</p><script>
const data = new FormData();
data.append('file', new Blob(['id,mass [kg],radius [m]\\nx,1,1\\n']), 'evil.csv');
fetch('{base}/api/catalogues?auto=1', {{method: 'POST', mode: 'no-cors', body: data}})
  .finally(() => {{ document.getElementById('done').textContent = 'sent'; }});
</script>
<form id=f method=post action="{base}/api/views"><input name=title value=t></form>
</body>"""


def test_another_origin_cannot_upload_or_post(browser: Browser, base_url: str) -> None:
    before = httpx.get(f"{base_url}/api/catalogues").json()["items"]
    context = new_context(browser)
    try:
        context.route("http://localhost:9/evil.html", lambda route: route.fulfill(
            content_type="text/html", body=EVIL_PAGE.format(base=base_url)))
        evil = context.new_page()
        evil.goto("http://localhost:9/evil.html")
        expect(evil.locator("#done")).to_have_text("sent", timeout=10_000)
        with evil.expect_navigation():
            evil.evaluate("document.getElementById('f').submit()")
        body: dict[str, Any] = evil.evaluate("JSON.parse(document.body.innerText)")
        assert body["error"] == "forbidden" and "refused" in body["detail"]
    finally:
        context.close()
    assert httpx.get(f"{base_url}/api/catalogues").json()["items"] == before


def test_the_policy_lets_the_diagram_chooser_submit(page: Page, guarded_url: str,
                                                    catalogue: str) -> None:
    # diagrams.html's one inline handler runs under the policy (allowed by its hash only)
    page.goto(f"{guarded_url}/catalogues/{catalogue}/diagrams?diagram=distributions")
    page.wait_for_selector("#figure[data-drawn=true]", timeout=30_000)
    with page.expect_navigation():
        page.select_option("#diagram-form select[name=label]", "terrestrial world")
    assert "label=terrestrial+world" in page.url
    _assert_clean(page)
