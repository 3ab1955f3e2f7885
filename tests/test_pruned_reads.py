"""The dashboard reads only what it shows (issue 10): findings pages, the Systems list and one
system's page answer the same when the bodies they must not read are gone, and a large page
stays under about 2 MB.

A 20,000-body demo catalogue is checked in partitions of about 1,000 bodies (its findings in row
groups of 100, so that pages span several) and written as a run folder by ``check --out``'s own
code (``cli.run_folder``); each test works on a copy of it and deletes files: a request that
still read them would fail.
"""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path
from urllib.parse import quote

import polars as pl
import pyarrow.parquet as pq
import pytest
from partitioned_run import demo_run_folder
from web_support import SyncClient, asgi_client

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.screens import queries, triage
from bodycensus.dashboard.screens.bodies import (
    IN_ROW_ORDER,
    bodies_page,
    filtered_bodies,
    write_bodies_by_row,
)
from bodycensus.dashboard.screens.systems import (
    SYSTEM_INDEX,
    SYSTEMS,
    _merged,
    _partial,
    body_findings,
    systems_table,
    write_systems,
)
from bodycensus.dashboard.screens.viewstate import ViewState
from bodycensus.dashboard.settings import Settings
from bodycensus.storage.decisions import Decision
from bodycensus.storage.runs import BODY_INDEX, in_list_order, in_stored_order, scan_findings
from bodycensus.storage.store import Store, json_ready

BODIES = 20_000
ROW_GROUP = 100  # findings per row group here (the sample has hundreds, not thousands)
MAX_RESPONSE = 2 * 1024 * 1024  # the "no response carries more than about 2 MB"


@pytest.fixture(scope="module")
def folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A checked run folder of a demo catalogue in about 20 partitions."""
    run = demo_run_folder(tmp_path_factory.mktemp("pruned"), BODIES,
                          {"FINDINGS_ROW_GROUP": ROW_GROUP})
    assert len(list((run / "bodies").glob("*.parquet"))) >= 10
    return run


@pytest.fixture()
def run(folder: Path, tmp_path: Path) -> Path:
    """A copy of the run folder this test may delete files from."""
    return Path(shutil.copytree(folder, tmp_path / "run"))


def _forget_bodies(run: Path, keep: frozenset[str] = frozenset()) -> None:
    """Delete every partition file but those named in ``keep``, and the body index."""
    for part in (run / "bodies").glob("*.parquet"):
        if part.name not in keep:
            part.unlink()
    (run / BODY_INDEX).unlink()


def test_findings_are_stored_in_the_lists_order_in_small_row_groups(run: Path) -> None:
    stored = scan_findings(run).collect()
    assert stored.height > 2 * ROW_GROUP  # so that pages span several row groups
    assert stored.equals(in_list_order(stored.lazy()).collect())
    meta = pq.ParquetFile(run / "findings.parquet").metadata
    assert meta.num_row_groups >= 5
    assert all(meta.row_group(i).num_rows <= ROW_GROUP
               for i in range(meta.num_row_groups))
    assert in_stored_order(run, "severity") and not in_stored_order(run, "-severity")
    # A default page is the slice of the list sorted afresh.
    page = queries.findings_page(run, ViewState(offset=ROW_GROUP - 10, limit=50))
    fresh = in_list_order(scan_findings(run)).slice(ROW_GROUP - 10, 50).collect()
    assert [(f["body"], f["rule"]) for f in page["items"]] == list(
        zip(fresh["body"], fresh["rule"], strict=True))


def test_findings_pages_read_no_body(run: Path) -> None:
    decided = [Decision("system", "hill-spacing", "x", "accepted")]  # needs each one's system
    views = [ViewState(), ViewState(offset=250, limit=100), ViewState(sort="-margin"),
             ViewState(severity=("note",), sort="value", offset=50),
             ViewState(severity=("error", "impossible"), sort="-severity"),
             ViewState(rule=("hill-spacing",), undecided=True)]
    system = scan_findings(run).filter(pl.col("rule") == "hill-spacing").collect()["system"][0]
    decided.append(Decision("system", "hill-spacing", system, "accepted"))
    before = [queries.findings_page(run, view, decided) for view in views]
    counts = triage.triage_counts(run, decided)
    assert before[-1]["total"] < scan_findings(run).filter(
        pl.col("rule") == "hill-spacing").collect().height  # the decision covers some
    shutil.rmtree(run / "bodies")
    (run / BODY_INDEX).unlink()
    assert [queries.findings_page(run, view, decided) for view in views] == before
    assert triage.triage_counts(run, decided) == counts


def test_the_systems_list_reads_only_its_table(run: Path) -> None:
    views = [ViewState(), ViewState(offset=100, limit=200), ViewState(severity=("error",))]
    before = [queries.systems_page(run, view) for view in views]
    systems = [item["system"] for item in before[0]["items"]]
    badges = triage.counts_by(run, [], "system", systems)
    assert before[0]["total"] == systems_table(run).collect().height > 200
    _forget_bodies(run)
    assert [queries.systems_page(run, view) for view in views] == before
    assert triage.counts_by(run, [], "system", systems) == badges


def test_a_systems_page_reads_only_its_partitions(run: Path) -> None:
    system = queries.systems_page(run, ViewState(severity=("impossible",)))["items"][0]["system"]
    detail, groups = queries.system_detail(run, system), triage.system_groups(run, [], system)
    assert detail["total"] > 1 and groups
    parts = pl.read_parquet(run / SYSTEM_INDEX).filter(pl.col("system") == system)["part"]
    _forget_bodies(run, keep=frozenset(parts))
    assert len(list((run / "bodies").glob("*.parquet"))) == len(parts) < 5
    assert queries.system_detail(run, system) == detail
    assert triage.system_groups(run, [], system) == groups


def test_an_older_run_gets_its_table_of_systems_on_the_first_request(run: Path) -> None:
    expected = queries.systems_page(run, ViewState(limit=500))
    (run / SYSTEMS).unlink()
    (run / SYSTEM_INDEX).unlink()
    assert queries.systems_page(run, ViewState(limit=500)) == expected
    assert (run / SYSTEMS).is_file() and (run / SYSTEM_INDEX).is_file()


def test_the_systems_table_written_range_by_range_equals_one_count_of_every_body(run: Path
                                                                                ) -> None:
    """Bounded memory: slices of 700 bodies counted apart and merged by ranges of about 3,000
    bodies' systems give the table one count over every body at once gives, and its index."""
    per_body = body_findings(scan_findings(run)).collect().lazy()
    every = pl.concat([_partial(pl.scan_parquet(p), per_body).with_columns(part=pl.lit(p.name))
                       for p in sorted((run / "bodies").glob("*.parquet"))]).collect()
    expected = _merged(every.lazy().drop("part")).collect()
    write_systems(run, bucket_bodies=3_000, batch=700)
    table = pl.read_parquet(run / SYSTEMS)
    assert table.height == expected.height > 1000 and table.equals(expected)
    assert pq.ParquetFile(run / SYSTEMS).metadata.num_row_groups >= 5  # one range at a time
    assert pl.read_parquet(run / SYSTEM_INDEX).equals(
        every.select("system", "part").unique().sort("system", "part"))
    assert not [p for p in run.iterdir() if ".spill" in p.name or p.name.endswith(".tmp")]
    assert systems_table(run).collect().equals(expected)  # its version is current


def test_the_bodies_lists_default_pages_are_slices_of_the_bodies_in_row_order(run: Path
                                                                             ) -> None:
    """Written range by range (ranges of ~3,000 bodies, read 700 at a time), the copy in the
    file's order gives the pages a sort of every body gives, then with every partition gone."""
    views = [ViewState(), ViewState(offset=4_321, limit=100), ViewState(order="-_row"),
             ViewState(order="-_row", offset=19_990, limit=50), ViewState(offset=19_990),
             ViewState(offset=30_000)]
    expected = []
    for view in views:
        rows = filtered_bodies(run, view).slice(view.offset, view.limit).collect()
        expected.append((rows.to_dicts(), BODIES))
    assert [len(rows) for rows, _ in expected] == [50, 100, 50, 10, 10, 0]
    write_bodies_by_row(run, bucket_rows=3_000, batch=700)
    assert pq.ParquetFile(run / IN_ROW_ORDER).metadata.num_row_groups >= 5
    _forget_bodies(run)
    for view, (rows, total) in zip(views, expected, strict=True):
        page = bodies_page(run, view)
        assert page["total"] == total
        assert [{k: v for k, v in item.items() if k not in ("worst", "findings")}
                for item in page["items"]] == json_ready(rows)
    assert not [p for p in run.iterdir() if ".spill" in p.name or p.name.endswith(".tmp")]


@pytest.fixture(scope="module")
def site(folder: Path, tmp_path_factory: pytest.TempPathFactory
         ) -> Iterator[tuple[SyncClient, str]]:
    data_dir = tmp_path_factory.mktemp("pruned-data")
    cat_id = Store(data_dir).add_run(folder).id
    with asgi_client(create_app(Settings(data_dir=data_dir))) as client:
        yield client, cat_id


def test_the_largest_pages_stay_under_two_megabytes(site: tuple[SyncClient, str]) -> None:
    client, cat = site
    api, page = f"/api/catalogues/{cat}", f"/catalogues/{cat}"
    biggest = client.get(f"{api}/systems", params={"limit": 1}).json()["items"][0]["system"]
    asked = [(f"{api}/findings", {"limit": 1000}), (f"{page}/findings", {"limit": 1000}),
             (f"{api}/systems", {"limit": 1000}), (f"{page}/systems", {"limit": 1000}),
             (f"{api}/bodies", {"limit": 1000}), (f"{page}/bodies", {"limit": 1000}),
             (f"{api}/aggregates", {}), (page, {}),
             (f"{page}/diagrams", {"diagram": "mass-radius"}),
             (f"{page}/systems/{quote(biggest, safe='')}", {})]
    for path, query in asked:
        response = client.get(path, params=query)
        assert response.status_code == 200, path
        assert len(response.content) < MAX_RESPONSE, (path, len(response.content))
    found = client.get(f"{api}/findings", params={"limit": 1000}).json()
    assert len(found["items"]) == min(1000, found["total"]) > 500


def test_the_overview_lists_the_strongest_artefacts_only(run: Path,
                                                          monkeypatch: pytest.MonkeyPatch) -> None:
    # A 10M demo finds ~10,800 artefacts: 3.4 MB of JSON when the overview carried them all.
    everything = queries.artefacts(run)
    assert len(everything) >= 3
    monkeypatch.setattr(queries, "ARTEFACTS_SHOWN", 2)
    found = queries.overview(run, {})
    assert found["artefacts"] == everything[:2] and found["artefacts_total"] == len(everything)
    assert queries.artefacts(run, offset=1, limit=1) == everything[1:2]
