"""The dashboard in headless Chromium: upload, overview, every diagram, a flagged body, findings,
a saved view opened in a fresh browser, and the self-contained report opened with no server.

The steps share one page and one uploaded catalogue (plotly.js compiles on every page load).
"""

from __future__ import annotations

import csv
import re
from pathlib import Path
from typing import Any

import pytest
from conftest import new_context
from playwright.sync_api import Browser, Page, expect

from bodycensus.dashboard.screens import page_context
from bodycensus.demo import write_demo

HOSTILE_LABEL = "<img src=x onerror=alert(1)>"
FIGURE_INFO = """() => {
  const gd = document.getElementById('figure');
  return {
    references: gd.data.filter(t => t.meta === 'reference').map(t => t.name),
    flagged: gd.data.filter(t => t.meta === 'flagged').length,
    shapes: (gd.layout.shapes || []).map(s => s.name || s.type),
    traces: gd.data.length,
  };
}"""
# The marker of the first (most serious) flagged trace that lies farthest from every other
# marker, so the click cannot land on a neighbour drawn on top of it.
FLAGGED_POINT = """() => {
  const gd = document.getElementById('figure');
  const xa = gd._fullLayout.xaxis, ya = gd._fullLayout.yaxis, box = gd.getBoundingClientRect();
  const at = (t, i) => ({x: box.left + xa._offset + xa.l2p(t.x[i]),
                         y: box.top + ya._offset + ya.l2p(t.y[i]), id: t.customdata[i]});
  const traces = gd.data.filter(t => t.meta === 'flagged');
  const all = traces.flatMap(t => t.x.map((_, i) => at(t, i)));
  const gap = p => Math.min(...all.filter(q => q.id !== p.id)
                                  .map(q => Math.hypot(p.x - q.x, p.y - q.y)), Infinity);
  return traces[0].x.map((_, i) => at(traces[0], i))
    .reduce((best, p) => gap(p) > gap(best) ? p : best);
}"""


@pytest.fixture(scope="module")
def catalogue_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo catalogue (3,000 bodies, planted defects) plus two bodies whose type is HTML."""
    path, _truth = write_demo(tmp_path_factory.mktemp("upload") / "sector.csv", n_bodies=3000)
    with path.open("r+", newline="", encoding="utf-8") as handle:
        header = next(csv.reader(handle))
        handle.seek(0, 2)
        writer = csv.writer(handle)
        for i in range(2):
            row = dict.fromkeys(header, "")
            row.update({"id": f"odd-{i}", "type": HOSTILE_LABEL, "mass (earth_mass)": "1.0",
                        "radius_km": "6371"})
            writer.writerow([row[c] for c in header])
    return path


@pytest.fixture(scope="module")
def catalogue(page: Page, base_url: str, catalogue_file: Path, screenshots: Path) -> str:
    """Upload the file through the upload box and wait for the overview; the catalogue's id."""
    page.goto(f"{base_url}/")
    page.screenshot(path=screenshots / "01-catalogues.png", full_page=True)
    page.set_input_files("#file-input", str(catalogue_file))
    expect(page.locator("#upload-status")).to_be_visible()
    page.wait_for_url(re.compile(r"/catalogues/[^/?]+$"), timeout=60_000)
    expect(page.locator("#by-severity")).to_be_visible(timeout=60_000)
    return page.url.rstrip("/").rsplit("/", 1)[1]


def _figure(page: Page, url: str) -> dict[str, Any]:
    """Open a diagram page and wait until plotly has drawn it."""
    page.goto(url)
    page.wait_for_selector("#figure[data-drawn=true]", timeout=30_000)
    return page.evaluate(FIGURE_INFO)


def test_upload_reaches_the_overview(page: Page, catalogue: str, screenshots: Path) -> None:
    expect(page.locator("#catalogue-status")).to_have_text("ready")
    impossible = page.locator("#by-severity tr", has_text="impossible").locator("a")
    expect(impossible).to_have_attribute("href", re.compile(r"findings\?severity=impossible"))
    expect(page.locator("#by-rule")).to_contain_text("inside-rigid-roche")
    expect(page.locator("#coverage tbody tr").first).to_be_visible()
    expect(page.locator("#by-label")).to_contain_text(HOSTILE_LABEL)  # shown as text
    assert page.locator("img").count() == 0
    page.screenshot(path=screenshots / "02-overview.png", full_page=True)


@pytest.mark.parametrize("diagram, references, shapes", [
    ("density", ["plausible band, lower edge", "plausible band, upper edge"], []),
    ("mass-radius", ["iron", "rock", "water ice", "cold H/He"], []),
    ("roche", ["rigid Roche limit", "fluid Roche limit", "parent surface"], []),
    ("orbits", ["Hill radius", "stable prograde limit", "Kepler's third law"], []),
    ("tidal-locking", ["despinning time = age", "tidal-lock-age limit"], []),
    ("tidal-heating", ["rigid Roche limit", "fluid Roche limit", "Io's heat flux"], []),
    ("remaining-life", ["one system age", "short-lived-orbit limit"], []),
    ("rings", ["rigid Roche limit", "fluid Roche limit", "ring-beyond-roche limit",
               "planet surface"], []),
    ("distributions", [], []),
])
def test_each_diagram_draws_its_reference_lines(page: Page, base_url: str, catalogue: str,
                                                screenshots: Path, diagram: str,
                                                references: list[str], shapes: list[str]) -> None:
    info = _figure(page, f"{base_url}/catalogues/{catalogue}/diagrams?diagram={diagram}")
    for name in references:
        assert any(r.startswith(name) for r in info["references"]), (name, info["references"])
    for name in shapes:
        assert name in info["shapes"]
    assert info["traces"] > 0
    page.screenshot(path=screenshots / f"03-diagram-{diagram}.png", full_page=True)


def test_marked_points_are_listed_a_page_at_a_time(page: Page, base_url: str, catalogue: str,
                                                   screenshots: Path,
                                                   monkeypatch: pytest.MonkeyPatch) -> None:
    """The mass-radius page lists its marked points a page at a time under the figure (a 10M
    catalogue marks 2,000: 1.3 MB of table on every request before), with links to the next
    page and to the findings of the diagram's rules; the figure still draws every marker.
    Pages of 10 here (100 in use), so the 3,000-body demo fills several."""
    monkeypatch.setattr(page_context, "DRAWN_PAGE", 10)
    url = f"{base_url}/catalogues/{catalogue}/diagrams?diagram=mass-radius&units=si"
    info = _figure(page, url)
    rows = page.locator("#drawn-table tbody tr")
    expect(rows).to_have_count(10)
    listed = re.search(r"Listed 1–10 of ([\d,]+)\.", page.locator("#drawn").inner_text())
    assert listed is not None and info["flagged"] > 0
    total = int(listed[1].replace(",", ""))
    assert total > 10
    first = rows.first.inner_text()
    page.screenshot(path=screenshots / "03-mass-radius-marked-page-1.png", full_page=True)
    page.locator("#drawn-next").click()
    page.wait_for_url(re.compile(r"offset=10"))
    page.wait_for_selector("#figure[data-drawn=true]", timeout=30_000)
    expect(page.locator("#drawn")).to_contain_text(f"Listed 11–{min(20, total)} of {total:,}.")
    assert rows.first.inner_text() != first
    assert page.evaluate(FIGURE_INFO)["flagged"] == info["flagged"]  # the same figure
    page.locator("#drawn-table a[href*='/bodies/']").first.focus()
    page.screenshot(path=screenshots / "03-mass-radius-marked-page-2.png", full_page=True)
    expect(page.locator("#drawn-prev")).to_have_attribute("href", re.compile(r"#drawn$"))
    page.locator("#drawn-findings").click()
    page.wait_for_url(re.compile(r"/findings\?"))
    assert "rule=" in page.url
    expect(page.locator("#findings-table tbody tr, table tbody tr").first).to_be_visible()


def test_hostile_label_is_text_in_the_diagram(page: Page, base_url: str, catalogue: str) -> None:
    url = (f"{base_url}/catalogues/{catalogue}/diagrams?diagram=density"
           "&label=%3Cimg+src%3Dx+onerror%3Dalert%281%29%3E")
    _figure(page, url)
    expect(page.locator("#diagram-form select[name=label]")).to_have_value(HOSTILE_LABEL)
    expect(page.locator("#figure .gtitle")).to_contain_text(HOSTILE_LABEL)
    assert page.locator("img").count() == 0


def test_click_on_a_flagged_body_opens_it(page: Page, base_url: str, catalogue: str,
                                          screenshots: Path) -> None:
    info = _figure(page, f"{base_url}/catalogues/{catalogue}/diagrams?diagram=roche")
    assert info["flagged"] > 0
    point = page.evaluate(FLAGGED_POINT)
    page.mouse.move(point["x"], point["y"])
    page.mouse.click(point["x"], point["y"])
    page.wait_for_url(re.compile(r"/bodies/"), timeout=10_000)
    expect(page.locator("#body-id")).to_have_text(point["id"])
    page.wait_for_selector(".system-figure:not([hidden]) .main-svg", timeout=30_000)
    names = page.evaluate("() => document.querySelector('.system-figure:not([hidden])')"
                          ".data.map(t => t.name)")
    assert {"rigid Roche zone", "fluid Roche zone"} <= set(names)
    expect(page.locator("#body-findings")).to_contain_text("inside-rigid-roche")
    page.screenshot(path=screenshots / "04-body.png", full_page=True)


def test_findings_list_filters_and_links_bodies(page: Page, base_url: str, catalogue: str,
                                                screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{catalogue}/findings?severity=impossible")
    rows = page.locator("#findings-table tbody tr")
    expect(rows.first).to_contain_text("impossible")
    assert rows.count() == int(page.locator("#findings-total").inner_text().replace(",", ""))
    page.screenshot(path=screenshots / "05-findings.png", full_page=True)
    rows.first.locator("a").first.click()
    page.wait_for_url(re.compile(r"/bodies/"))


def test_saved_view_opens_the_same_state_in_a_new_browser(page: Page, browser: Browser,
                                                          base_url: str, catalogue: str,
                                                          screenshots: Path) -> None:
    info = _figure(page, f"{base_url}/catalogues/{catalogue}/diagrams?diagram=distributions"
                         "&field=radius&label=asteroid")
    assert "cutoff" in info["shapes"]  # the demo's planted radius floor
    page.click("#save-view")
    page.fill("#save-form input[name=title]", "Asteroid radii")
    page.fill("#save-form textarea[name=note]", "A hard floor in radius: a clamp?")
    page.click("#save-submit")
    link = page.locator("#saved-url")
    expect(link).to_be_visible()
    url = link.get_attribute("href")
    assert url and re.search(r"/v/[A-Za-z0-9_-]+$", url)
    fresh = new_context(browser)
    try:
        other = fresh.new_page()
        other.goto(url)
        expect(other.locator("#saved-title")).to_have_text("Asteroid radii")
        expect(other.locator("#saved-note")).to_have_text("A hard floor in radius: a clamp?")
        other.wait_for_selector("#figure[data-drawn=true]", timeout=30_000)
        expect(other.locator("select[name=field]")).to_have_value("radius")
        expect(other.locator("select[name=label]")).to_have_value("asteroid")
        names = other.evaluate("() => document.getElementById('figure').data.map(t => t.name)")
        assert names == ["asteroid"]
        other.screenshot(path=screenshots / "06-saved-view.png", full_page=True)
    finally:
        fresh.close()
    page.goto(f"{base_url}/catalogues/{catalogue}")
    expect(page.locator("#saved-views")).to_contain_text("Asteroid radii")


def test_report_opens_with_no_server(page: Page, browser: Browser, base_url: str, catalogue: str,
                                     screenshots: Path, tmp_path: Path) -> None:
    page.goto(f"{base_url}/catalogues/{catalogue}/diagrams?diagram=roche")
    with page.expect_download() as download:
        page.click("#download-report")
    saved = tmp_path / "report.html"
    download.value.save_as(saved)
    offline = new_context(browser)
    try:
        report = offline.new_page()
        requests: list[str] = []
        report.on("request", lambda r: requests.append(r.url))
        report.goto(saved.as_uri())
        report.wait_for_selector(".report-figure .main-svg", timeout=30_000)
        names = report.evaluate("() => document.querySelector('.report-figure').data"
                                ".map(t => t.name)")
        assert any(n.startswith("rigid Roche limit") for n in names)
        assert all(r.startswith(("file:", "data:")) for r in requests), requests
        report.screenshot(path=screenshots / "07-report.png")
    finally:
        offline.close()


def test_mapping_step_corrects_fields_and_units(page: Page, base_url: str, tmp_path: Path,
                                               screenshots: Path) -> None:
    source = tmp_path / "no-units.csv"
    source.write_text("id,kind,m,r\na,Frozen moon,0.01,1500\nb,Rocky world,1.0,6371\n"
                      "c,Rocky world,2.0,7900\n", encoding="utf-8")
    page.goto(f"{base_url}/")
    page.set_input_files("#file-input", str(source))
    expect(page.locator("#mapping-form")).to_be_visible(timeout=30_000)
    expect(page.locator("tr[data-column=m] .samples")).to_contain_text("0.01")
    page.select_option("tr[data-column=m] select[name=field]", "mass")
    page.select_option("tr[data-column=m] select[name=unit]", "earth_mass")
    page.select_option("tr[data-column=r] select[name=field]", "radius")
    page.select_option("tr[data-column=r] select[name=unit]", "km")
    page.select_option("tr[data-label='Frozen moon'] select[name=family]", "ice")
    page.screenshot(path=screenshots / "08-mapping.png", full_page=True)
    page.click("#mapping-form button[type=submit]")
    expect(page.locator("#by-severity")).to_be_visible(timeout=60_000)
    expect(page.locator("#by-family")).to_contain_text("ice")
    cat_id = page.url.rstrip("/").rsplit("/", 1)[1]
    body = page.request.get(f"{base_url}/api/catalogues/{cat_id}/bodies/b").json()
    radius = next(f for f in body["fields"] if f["field"] == "radius")
    assert radius["value"] == pytest.approx(6.371e6)  # km converted to m
