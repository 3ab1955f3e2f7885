"""The curator's dashboard in headless Chromium (issue 13), one test per item: one truth per
severity, words and units a curator reads, bodies by name, catalogues one can manage, diagrams
that answer questions. Each writes a screenshot named ``curator-NN-<what>.png``.

Two catalogues: the 3,000-body demo uploaded through the API, and a 29-body export with odd
headers (``curator_files.py``) taken through the upload box and its mapping step.
"""

from __future__ import annotations

import csv
import io
import re
import time
from collections.abc import Iterator
from pathlib import Path
from urllib.parse import parse_qs, urlsplit

import httpx
import pytest
from curator_files import names_only, odd_catalogue
from playwright.sync_api import Page, expect

from bodycensus.demo import write_demo

HEADERS = {"X-Requested-With": "XMLHttpRequest"}
# Columns of the Findings table: pick, severity, decision, body, name, label, family, rule,
# value, limit, unit, margin, message, row.
NAME, RULE, MESSAGE = 4, 7, 12


def _wait(base: str, cat_id: str) -> dict:
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline:
        body = httpx.get(f"{base}/api/catalogues/{cat_id}").json()
        if body["status"] in ("ready", "failed"):
            return body
        time.sleep(0.2)
    raise AssertionError(f"{cat_id} did not finish")


@pytest.fixture(scope="module")
def demo(base_url: str, tmp_path_factory: pytest.TempPathFactory) -> str:
    """The 3,000-body demo, uploaded through the API; its id."""
    path, _ = write_demo(tmp_path_factory.mktemp("curator") / "sector.csv", n_bodies=3000)
    answer = httpx.post(f"{base_url}/api/catalogues", params={"auto": "1"}, headers=HEADERS,
                        files={"file": (path.name, path.read_bytes(), "text/csv")}).json()
    assert _wait(base_url, answer["id"])["status"] == "ready"
    return answer["id"]


@pytest.fixture(scope="module")
def odd(page: Page, base_url: str, tmp_path_factory: pytest.TempPathFactory,
        screenshots: Path) -> str:
    """The odd export through the upload box: its mapping step says the id is missing at once,
    explains each family, and takes the name column as the id too; the catalogue's id."""
    source = odd_catalogue(tmp_path_factory.mktemp("odd"))
    page.goto(f"{base_url}/")
    page.set_input_files("#file-input", str(source))
    page.wait_for_url(re.compile(r"/mapping$"), timeout=60_000)
    expect(page).to_have_title(re.compile(r"^Map the columns · tarn-export.csv"))
    expect(page.locator("#id-missing")).to_be_visible()  # said at once, before any click
    moon = page.locator("tr[data-label='moon']")
    expect(moon.locator("select")).to_have_value("unknown")
    expect(moon).to_contain_text("no word of composition or kind in the label")
    expect(page.locator("tr[data-label='terrestrial world']")).to_contain_text(
        "the label contains 'terrestrial'")
    expect(page.locator("#mapping")).to_contain_text("turns off")
    page.screenshot(path=screenshots / "curator-11-mapping-step.png", full_page=True)
    page.click("#mapping-form button[type=submit]")  # no id yet: refused on the page
    expect(page.locator("#id-column")).to_be_focused()
    page.select_option("#id-column", "designation")  # the name column is also the id
    expect(page.locator("#id-missing")).to_be_hidden()
    expect(page.locator("tr[data-column=designation] select[name=field]")).to_have_value("name")
    page.click("#mapping-form button[type=submit]")
    expect(page.locator("#by-severity")).to_be_visible(timeout=60_000)
    return page.url.rstrip("/").rsplit("/", 1)[1]


def _options(page: Page, selector: str) -> list[str]:
    return page.eval_on_selector_all(selector, "els => els.map(e => e.value)")


# --- one truth per severity and rule ----------------------------------------------------------


def test_01_one_entry_per_rule_with_counts_by_severity(page: Page, base_url: str, demo: str,
                                                       screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{demo}")
    rules = page.locator("#by-rule tbody tr td:first-child").all_inner_texts()
    assert len(rules) == len(set(rules)) and "inside-fluid-roche" in rules
    aggs = httpx.get(f"{base_url}/api/catalogues/{demo}/aggregates").json()
    severities = [r["severity"] for r in aggs["rules"] if r["rule"] == "inside-fluid-roche"]
    fluid = page.locator("#by-rule tr", has=page.locator("code", has_text="inside-fluid-roche"))
    expect(fluid.locator(".badge")).to_have_count(len(severities))  # counts side by side
    page.locator("#by-rule").screenshot(path=screenshots / "curator-01-rules-once.png")
    page.goto(f"{base_url}/catalogues/{demo}/findings")
    options = [o for o in _options(page, "#filter-rule option") if o]
    assert len(options) == len(set(options))
    label = page.locator("#filter-rule option[value=inside-fluid-roche]").inner_text()
    assert re.fullmatch(r"inside-fluid-roche \([\d,]+ \w+(, [\d,]+ \w+)*\)", label)


def test_02_each_finding_quotes_its_own_limit_and_a_citation(page: Page, base_url: str,
                                                            odd: str, screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{odd}/findings?rule=over-neutron-star-max")
    rows = page.locator("#findings-table tbody tr")
    expect(rows).to_have_count(2)
    first, second = rows.nth(0), rows.nth(1)
    expect(first).to_contain_text("impossible")
    expect(first).to_contain_text("mass 3.2 M_sun is above the limit 3 M_sun")
    limit = 9  # pick, severity, decision, body, name, label, family, rule, value, limit
    expect(first.locator("td").nth(limit)).to_have_text("3")  # its own severity's limit
    expect(second).to_contain_text("suspect")
    expect(second.locator("td").nth(limit)).to_have_text("2.3")
    page.screenshot(path=screenshots / "curator-02-neutron-limits.png", full_page=True)
    page.goto(f"{base_url}/catalogues/{odd}/bodies/Vell-1")
    source = page.locator("#body-findings td.source").first
    expect(source).to_contain_text("Rhoades & Ruffini 1974")
    assert "memory" not in source.inner_text()
    page.goto(f"{base_url}/catalogues/{odd}")
    coverage = page.locator("#coverage tr", has=page.locator("code",
                                                             has_text="over-neutron-star-max"))
    expect(coverage.locator(".badge")).to_have_text(["impossible", "suspect"])
    coverage.screenshot(path=screenshots / "curator-02-coverage-severities.png")


# --- words and units a curator reads ---------------------------------------------------------


def test_03_why_skipped_in_the_catalogues_terms(page: Page, base_url: str, demo: str,
                                               screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{demo}")
    why = " ".join(page.locator("#coverage td.muted").all_inner_texts())
    for internal in ("no bad", "band_low", "inner_apoapsis", "_a,"):
        assert internal not in why
    assert "without a sibling further in" in why
    rows = httpx.get(f"{base_url}/api/catalogues/{demo}").json()["rows"]
    bad_cell = page.locator("#coverage tr", has=page.locator("code", has_text="bad-cell"))
    expect(bad_cell.locator("td.num").first).to_have_text(f"{rows:,}")  # every row judged
    page.locator("#coverage").screenshot(path=screenshots / "curator-03-why-skipped.png")
    page.goto(f"{base_url}/catalogues/{demo}/diagrams?diagram=density")
    assert "families.py" not in page.locator("#figure-caption").inner_text()


def test_04_units_by_family_in_value_limit_and_message(page: Page, base_url: str, demo: str,
                                                      screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{demo}/findings?rule=inside-rigid-roche")
    row = page.locator("#findings-table tbody tr").first
    unit = row.locator("td.unit").inner_text()
    assert unit in ("km", "au")
    message = row.locator("td").nth(MESSAGE).inner_text()
    assert re.search(rf"\d {unit} is inside the rigid Roche limit [\d.e+-]+ {unit}$", message)
    title = row.locator("td.num").first.get_attribute("title") or ""
    assert re.fullmatch(r"value [\d.e+-]+ m, limit [\d.e+-]+ m", title)  # SI on hover
    page.screenshot(path=screenshots / "curator-04-units-by-family.png", full_page=True)
    page.click("#units-menu summary")
    page.select_option("#units-form select[name=units]", "si")
    page.click("#units-form button[type=submit]")
    page.wait_for_url(re.compile(r"units=si"))
    assert "rule=inside-rigid-roche" in page.url  # the other choices kept
    row = page.locator("#findings-table tbody tr").first
    expect(row.locator("td.unit")).to_have_text("m")
    assert re.search(r"\d m is inside the rigid Roche limit [\d.e+-]+ m$",
                     row.locator("td").nth(MESSAGE).inner_text())
    page.screenshot(path=screenshots / "curator-04-units-si.png", full_page=True)


def test_05_system_page_and_artefacts_in_curators_units(page: Page, base_url: str, demo: str,
                                                       screenshots: Path) -> None:
    systems = httpx.get(f"{base_url}/api/catalogues/{demo}/systems?limit=1").json()
    system = systems["items"][0]["system"]
    page.goto(f"{base_url}/catalogues/{demo}/systems/{system}")
    masses = page.locator("#system-tree tbody tr td:nth-child(7)").all_inner_texts()
    assert any(m.endswith("M_sun") for m in masses) and not any(m.endswith(" kg") for m in masses
                                                                if "M_" in m)
    json_link = page.locator("header a.json")
    expect(json_link).to_have_attribute("href", re.compile(r"^/api/catalogues/.+/systems/"))
    assert httpx.get(base_url + (json_link.get_attribute("href") or "")).json()["system"] == \
        system
    page.screenshot(path=screenshots / "curator-05-system-units.png", full_page=True)
    page.goto(f"{base_url}/catalogues/{demo}")
    wheres = page.locator("#artefacts tbody td:nth-child(4)").all_inner_texts()
    assert wheres and all(re.search(r"[a-zA-Z_]+(/cm3)?$", w) for w in wheres)  # a unit each
    places = [tuple(c.inner_text() for c in r.locator("td").all()[2:4])
              for r in page.locator("#artefacts tbody tr").all()]
    assert len(places) == len(set(places))  # each edge once, its family twin folded in
    page.locator("#artefacts").screenshot(path=screenshots / "curator-05-artefacts-once.png")


def test_06_a_unit_slip_is_said_the_way_round_it_happened(page: Page, base_url: str, odd: str,
                                                         screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{odd}/findings?rule=unit-slip")
    row = page.locator("#findings-table tbody tr").first
    expect(row).to_contain_text("mass looks 317.8x too small (values in Jupiter masses read "
                                "as Earth masses?)")
    assert "0.003146x" not in row.inner_text()
    expect(row.locator("td.unit")).to_have_text("g/cm3")
    page.screenshot(path=screenshots / "curator-06-unit-slip.png", full_page=True)


# --- bodies by name, and catalogues one can manage -------------------------------------------


def test_07_search_by_id_or_name_from_any_screen(page: Page, base_url: str, demo: str,
                                                 screenshots: Path) -> None:
    bodies = httpx.get(f"{base_url}/api/catalogues/{demo}/bodies?limit=5").json()["items"]
    named = next(b for b in bodies if b["name"])
    page.goto(f"{base_url}/catalogues/{demo}/findings")
    page.fill("#search-input", named["name"].split(" ")[0].lower())
    page.press("#search-input", "Enter")
    page.wait_for_url(re.compile(r"/search\?q="))
    expect(page.locator("#search-table tbody tr").first).to_be_visible()
    assert all(n.lower().startswith(named["name"].split(" ")[0].lower()) for n in
               page.locator("#search-table tbody td:nth-child(2)").all_inner_texts())
    page.screenshot(path=screenshots / "curator-07-search-results.png", full_page=True)
    page.goto(f"{base_url}/catalogues/{demo}/diagrams?diagram=roche")
    page.fill("#search-input", named["id"])
    page.press("#search-input", "Enter")
    page.wait_for_url(re.compile(r"/bodies/"))
    expect(page.locator("#body-id")).to_have_text(named["id"])
    expect(page.locator("#body-name")).to_have_text(named["name"])
    expect(page).to_have_title(re.compile(re.escape(f"{named['name']} ({named['id']})")))


def test_08_names_beside_ids_on_screens_and_in_exports(page: Page, base_url: str, demo: str,
                                                       screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{demo}/findings?severity=impossible")
    expect(page.locator("#findings-table thead th").nth(NAME)).to_have_text("Name")
    assert any(page.locator(f"#findings-table tbody td:nth-child({NAME + 1})").all_inner_texts())
    href = page.locator("a", has_text="CSV").first.get_attribute("href") or ""
    exported = list(csv.DictReader(io.StringIO(httpx.get(base_url + href).text)))
    assert exported and list(exported[0])[:4] == ["body", "name", "system", "parent"]
    page.goto(f"{base_url}/catalogues/{demo}/systems")
    primary = page.locator("#systems-table tbody tr").first.locator("td").nth(2)
    expect(primary.locator(".muted")).not_to_be_empty()  # the primary's name beside its id
    page.screenshot(path=screenshots / "curator-08-systems-names.png", full_page=True)


def test_09_a_preset_maps_the_next_file_with_the_same_header(page: Page, base_url: str,
                                                             odd: str, tmp_path: Path,
                                                             screenshots: Path) -> None:
    source = odd_catalogue(tmp_path)
    renamed = source.rename(tmp_path / "tarn-export-2.csv")
    page.goto(f"{base_url}/")
    page.set_input_files("#file-input", str(renamed))
    page.wait_for_url(re.compile(r"/catalogues/[^/?]+$"), timeout=60_000)
    expect(page.locator("#by-severity")).to_be_visible(timeout=60_000)  # no mapping step
    expect(page.locator("main")).to_contain_text("mapped with the preset")
    page.screenshot(path=screenshots / "curator-09-preset-reused.png", full_page=True)


def test_10_rename_rerun_and_delete_without_a_new_upload(page: Page, base_url: str,
                                                         tmp_path: Path,
                                                         screenshots: Path) -> None:
    source = odd_catalogue(tmp_path)
    third = source.rename(tmp_path / "tarn-third.csv")
    text = third.read_text().replace("designation,", "id,", 1)  # another header: no preset
    third.write_text(text)
    answer = httpx.post(f"{base_url}/api/catalogues", params={"auto": "1"}, headers=HEADERS,
                        files={"file": (third.name, third.read_bytes(), "text/csv")}).json()
    _wait(base_url, answer["id"])
    page.goto(f"{base_url}/catalogues/{answer['id']}")
    page.click("button[data-open=rename-dialog]")
    expect(page.locator("#rename-dialog")).to_be_visible()
    page.fill("#rename-input", "Tarn, checked again")
    page.screenshot(path=screenshots / "curator-10-rename-dialog.png")
    page.click("#rename-submit")
    expect(page.locator("#catalogue-name")).to_have_text("Tarn, checked again")
    page.click("button[data-open=rerun-dialog]")
    page.screenshot(path=screenshots / "curator-10-rerun-dialog.png")
    page.click("#rerun-submit")
    page.wait_for_url(re.compile(r"/mapping$"))
    expect(page.locator("#prefilled")).to_contain_text("the previous run")
    page.select_option("tr[data-label='moon'] select[name=family]", "rock")
    page.screenshot(path=screenshots / "curator-10-rerun-mapping.png", full_page=True)
    page.click("#mapping-form button[type=submit]")
    expect(page.locator("#by-severity")).to_be_visible(timeout=60_000)
    expect(page.locator("main")).to_contain_text("run 2 of this file")
    families = httpx.get(f"{base_url}/api/catalogues/{answer['id']}").json()["summary"]
    assert families["label_families"]["moon"] == "rock"
    page.click("button[data-open=delete-dialog]")
    page.screenshot(path=screenshots / "curator-10-delete-dialog.png")
    page.click("#delete-submit")
    page.wait_for_url(f"{base_url}/")
    expect(page.locator("#catalogue-list")).not_to_contain_text("Tarn, checked again")


def test_11_a_catalogue_still_mapping_opens_its_mapping_step(page: Page, base_url: str,
                                                            tmp_path: Path) -> None:
    path = tmp_path / "unsure.csv"
    path.write_text("key,kind,m\nA,rocky world,1\n", encoding="utf-8")
    answer = httpx.post(f"{base_url}/api/catalogues", headers=HEADERS,
                        files={"file": (path.name, path.read_bytes(), "text/csv")}).json()
    assert answer["status"] == "mapping"
    page.goto(f"{base_url}/catalogues/{answer['id']}/findings?severity=error")
    page.wait_for_url(re.compile(r"/mapping$"))
    expect(page.locator("#mapping-form")).to_be_visible()


@pytest.mark.http_error_expected  # the upload's 422 is the point
def test_12_a_file_with_nothing_physical_is_refused_at_upload(page: Page, base_url: str,
                                                             tmp_path: Path,
                                                             screenshots: Path) -> None:
    page.goto(f"{base_url}/")
    page.set_input_files("#file-input", str(names_only(tmp_path)))
    error = page.locator("#upload-error")
    expect(error).to_be_visible(timeout=30_000)
    expect(error).to_have_text(re.compile(r"^names\.txt: no column holds a physical quantity"))
    assert "\n" not in error.inner_text()
    page.screenshot(path=screenshots / "curator-12-refused-upload.png")


# --- diagrams that answer questions ----------------------------------------------------------


def _drawn(page: Page, url: str) -> None:
    page.goto(url)
    page.wait_for_selector("#figure[data-drawn=true]", timeout=30_000)


def _plot_box(page: Page) -> dict:
    return page.evaluate("""() => {
      const gd = document.getElementById('figure'), l = gd._fullLayout;
      const b = gd.getBoundingClientRect();
      return {left: b.left + l.xaxis._offset, top: b.top + l.yaxis._offset,
              width: l.xaxis._length, height: l.yaxis._length};
    }""")


def test_13_a_box_selection_opens_its_findings_and_bodies(page: Page, base_url: str, demo: str,
                                                          screenshots: Path) -> None:
    _drawn(page, f"{base_url}/catalogues/{demo}/diagrams?diagram=mass-radius")
    page.click("#figure .modebar-btn[data-title='Box Select']")
    box = _plot_box(page)
    x0, y0 = box["left"] + box["width"] * 0.2, box["top"] + box["height"] * 0.2
    page.mouse.move(x0, y0)
    page.mouse.down()
    page.mouse.move(x0 + box["width"] * 0.5, y0 + box["height"] * 0.6, steps=8)
    page.mouse.up()
    link = page.locator("#region-findings")
    expect(link).to_be_visible()
    page.screenshot(path=screenshots / "curator-13-box-drawn.png", full_page=True)
    query = parse_qs(urlsplit(link.get_attribute("href") or "").query)
    assert query["region_of"] == ["mass-radius"] and len(query["region"][0].split(",")) == 4
    link.click()
    page.wait_for_url(re.compile(r"/findings\?.*region="))
    expect(page.locator("#region-note")).to_contain_text("a box drawn on the Mass and radius")
    total = int(page.locator("#findings-total").inner_text().replace(",", ""))
    api = httpx.get(f"{base_url}/api/catalogues/{demo}/findings",
                    params={k: v[0] for k, v in query.items()}).json()["total"]
    assert total == api  # the same region, read back from the address
    page.screenshot(path=screenshots / "curator-13-region-findings.png", full_page=True)


def test_14_a_lasso_opens_the_bodies_inside_it(page: Page, base_url: str, demo: str,
                                               screenshots: Path) -> None:
    _drawn(page, f"{base_url}/catalogues/{demo}/diagrams?diagram=roche")
    page.click("#figure .modebar-btn[data-title='Lasso Select']")
    box = _plot_box(page)
    cx, cy = box["left"] + box["width"] * 0.5, box["top"] + box["height"] * 0.5
    path = [(cx - 150, cy - 100), (cx + 150, cy - 110), (cx + 160, cy + 120), (cx - 140, cy + 90)]
    page.mouse.move(*path[0])
    page.mouse.down()
    for point in path[1:] + path[:1]:
        page.mouse.move(*point, steps=6)
    page.mouse.up()
    link = page.locator("#region-bodies")
    expect(link).to_be_visible()
    assert "lasso=" in (link.get_attribute("href") or "")
    link.click()
    page.wait_for_url(re.compile(r"/bodies\?.*lasso="))
    expect(page.locator("#region-note")).to_contain_text("a lasso drawn on the Roche plane")
    page.screenshot(path=screenshots / "curator-14-lasso-bodies.png", full_page=True)


def test_15_every_label_as_small_multiples_with_named_marks(page: Page, base_url: str,
                                                            demo: str, screenshots: Path) -> None:
    _drawn(page, f"{base_url}/catalogues/{demo}/diagrams?diagram=distributions&field=radius")
    info = page.evaluate("""() => {
      const gd = document.getElementById('figure');
      return {panels: new Set(gd.data.filter(t => !t.meta).map(t => t.xaxis)).size,
              titles: (gd.layout.annotations || []).map(a => a.text),
              shapes: (gd.layout.shapes || []).map(s => s.label && s.label.text)};
    }""")
    assert info["panels"] > 5 and "asteroid" in info["titles"]
    assert "cutoff (asteroid)" in info["shapes"]  # the planted radius floor, named
    page.screenshot(path=screenshots / "curator-15-small-multiples.png", full_page=True)


def test_16_orbit_panels_share_one_style_per_meaning(page: Page, base_url: str, demo: str,
                                                     screenshots: Path) -> None:
    _drawn(page, f"{base_url}/catalogues/{demo}/diagrams?diagram=orbits")
    lines = page.evaluate("""() => document.getElementById('figure').data
      .filter(t => t.meta === 'reference').map(t => [t.name, t.line.color, t.line.dash])""")
    styles = {name: (colour, dash) for name, colour, dash in lines}
    assert len(set(styles.values())) == len(styles)  # no two meanings look alike
    assert styles["Kepler's third law"][1] == "solid"
    page.screenshot(path=screenshots / "curator-16-orbit-lines.png", full_page=True)


def test_17_the_density_band_at_each_bodys_mass(page: Page, base_url: str, demo: str,
                                                screenshots: Path) -> None:
    _drawn(page, f"{base_url}/catalogues/{demo}/diagrams?diagram=density&label=ocean+world")
    edges = page.evaluate("""() => document.getElementById('figure').data
      .filter(t => t.meta === 'reference').map(t => ({name: t.name, y: t.y}))""")
    assert [e["name"].split(",")[0] for e in edges] == ["plausible band"] * 2
    assert len({round(v, 6) for v in edges[0]["y"] if v is not None}) > 10  # moves with mass
    page.screenshot(path=screenshots / "curator-17-density-band.png", full_page=True)


def test_18_body_page_units_rows_and_its_parents_family(page: Page, base_url: str, odd: str,
                                                        demo: str, screenshots: Path) -> None:
    page.set_viewport_size({"width": 1400, "height": 900})
    page.goto(f"{base_url}/catalogues/{odd}/bodies/Tarn b I")
    derived = dict(zip(page.locator("#derived-table tbody td:first-child").all_inner_texts(),
                       page.locator("#derived-table tbody td:nth-child(2)").all_inner_texts(),
                       strict=True))
    assert derived["parent_family"] == "rock"  # the Moon's parent, a terrestrial world
    panel = page.locator("#fields").bounding_box()
    last = page.locator("#fields thead th").last.bounding_box()
    assert panel and last and last["x"] + last["width"] <= panel["x"] + panel["width"]
    page.screenshot(path=screenshots / "curator-18-moon-body.png", full_page=True)
    page.goto(f"{base_url}/catalogues/{odd}/bodies/Tarn")
    names = page.locator("#derived-table tbody td:first-child").all_inner_texts()
    assert "density" in names and not {"periapsis", "roche_rigid", "hill_ratio"} & set(names)
    notes = page.locator(".derived-note")
    expect(notes.first).to_contain_text("no parent")  # said once for every orbit row
    assert all("periapsis," not in n for n in notes.all_inner_texts()[1:])
    page.screenshot(path=screenshots / "curator-18-primary-body.png", full_page=True)
    page.set_viewport_size({"width": 1360, "height": 900})


def test_19_the_bodies_list_filters_orders_and_exports(page: Page, base_url: str, demo: str,
                                                       screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{demo}/bodies")
    total = int(page.locator("#bodies-total").inner_text().replace(",", ""))
    assert total == httpx.get(f"{base_url}/api/catalogues/{demo}").json()["rows"]
    page.select_option("#filter-label", "gas giant")
    page.select_option("#filter-order", "-mass")
    page.click("#filter-form button[type=submit]")
    page.wait_for_url(re.compile(r"label=gas\+giant.*order=-mass|order=-mass.*label=gas"))
    labels = set(page.locator("#bodies-table tbody td:nth-child(3)").all_inner_texts())
    assert labels == {"gas giant"}
    page.screenshot(path=screenshots / "curator-19-bodies-list.png", full_page=True)
    href = page.locator("a", has_text="CSV").first.get_attribute("href") or ""
    rows = list(csv.DictReader(io.StringIO(httpx.get(base_url + href).text)))
    count = int(page.locator("#bodies-total").inner_text().replace(",", ""))
    masses = [float(r["mass"]) for r in rows]
    assert len(rows) == count and masses == sorted(masses, reverse=True)


def test_20_findings_grouped_by_rule_and_label_come_first(page: Page, base_url: str, demo: str,
                                                          screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{demo}")
    first = page.locator("main section.panel").first
    expect(first).to_have_id("groups")
    page.locator("#groups").screenshot(path=screenshots / "curator-20-groups-overview.png")
    row = page.locator("#groups-table tbody tr").first
    rule = row.locator("code").inner_text()
    expect(row.locator("td").nth(6).locator("a")).to_have_count(
        min(3, int(row.locator("td").nth(4).inner_text().replace(",", ""))))
    row.locator("td").nth(2).locator("a").click()
    page.wait_for_url(re.compile(rf"/findings\?rule={re.escape(rule)}"))
    shown = set(page.locator(f"#findings-table tbody td:nth-child({RULE + 1})").all_inner_texts())
    assert shown == {rule}
    page.goto(f"{base_url}/catalogues/{demo}/findings/groups?severity=unstable")
    expect(page.locator("#groups-table tbody tr").first).to_contain_text("unstable")
    page.screenshot(path=screenshots / "curator-20-groups-screen.png", full_page=True)


def test_21_filter_form_one_field_a_line_and_clean_addresses(page: Page, base_url: str,
                                                             demo: str,
                                                             screenshots: Path) -> None:
    page.goto(f"{base_url}/catalogues/{demo}/findings")
    tops = [page.locator(s).bounding_box()["y"] for s in  # type: ignore[index]
            ("#filter-rule", "#filter-label", "#filter-family", "#filter-sort",
             "#filter-limit")]
    assert tops == sorted(tops) and len(set(tops)) == len(tops)  # one a line
    groups = page.eval_on_selector_all("#filter-sort optgroup", "gs => gs.map(g => g.label)")
    assert groups == ["Seriousness", "A column, smallest or A first",
                      "A column, largest or Z first"]
    page.locator("#filter-form input[value=impossible]").check()
    page.click("#filter-form button[type=submit]")
    page.wait_for_url(re.compile(r"/findings\?"))
    asked = parse_qs(urlsplit(page.url).query, keep_blank_values=True)
    assert asked["severity"] == ["impossible"]
    assert all(value != "" for values in asked.values() for value in values), asked
    page.locator("#filter-form").screenshot(path=screenshots / "curator-21-filter-form.png")


@pytest.fixture(autouse=True)
def _no_console_errors(page: Page, request: pytest.FixtureRequest) -> Iterator[None]:
    """Every screen here loads without a console error (but the refused upload's answer)."""
    errors: list[str] = []

    def record(message: object) -> None:
        if getattr(message, "type", "") == "error":
            errors.append(getattr(message, "text", ""))

    page.on("console", record)
    yield
    page.remove_listener("console", record)
    if request.node.get_closest_marker("http_error_expected"):
        errors = [e for e in errors if "status of 422" not in e]
    assert errors == [], errors
