"""The Dask engine (engines/dask) on a real LocalCluster of two worker processes on 127.0.0.1:
the same findings and aggregates as the local engine on a demo catalogue split into 8 Parquet
files by system and not by system, a worker killed mid-run, a bad file, and the run folder the
dashboard shows."""

from __future__ import annotations

import json
import os
import signal
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import polars as pl
import pytest
from dask_support import (
    assert_same_aggregates,
    assert_same_findings,
    findings_key,
    split_by_rows,
    split_by_system,
)

from bodycensus.demo import write_demo
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.engines.local import CheckResult, check_dataset, check_file
from bodycensus.input.ingest import IngestError

distributed = pytest.importorskip("distributed")
from bodycensus.engines.dask.cluster import LOOPBACK_SCHEDULER  # noqa: E402
from bodycensus.engines.dask.run import check_on_dask, spans_partitions  # noqa: E402

BODIES = 3_000  # enough for every rule family and the artefact detector, small enough for CI


@pytest.fixture(scope="module")
def client() -> Iterator[Any]:
    """Two worker processes, one thread each, on loopback, without Dask's dashboard."""
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None,
                                  scheduler_kwargs=LOOPBACK_SCHEDULER) as cluster, \
            distributed.Client(cluster) as connected:
        yield connected


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> Path:
    catalogue, _ = write_demo(tmp_path_factory.mktemp("demo") / "demo.parquet",
                              n_bodies=BODIES, seed=5)
    return catalogue


@pytest.fixture(scope="module")
def local(demo: Path, tmp_path_factory: pytest.TempPathFactory) -> tuple[CheckResult, Path]:
    work = tmp_path_factory.mktemp("local") / "run"
    return check_file(demo, work), work


@pytest.fixture(scope="module")
def by_rows(demo: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    return split_by_rows(pl.read_parquet(demo), tmp_path_factory.mktemp("rows"))


def _stages(calls: list[str]) -> Any:
    def progress(stage: str, done: float, /, rows: int | None = None) -> None:
        calls.append(stage)
    return progress


@pytest.mark.parametrize("split", ["system", "rows"])
def test_findings_and_aggregates_equal_the_local_engine(
        split: str, client: Any, demo: Path, local: tuple[CheckResult, Path],
        tmp_path: Path) -> None:
    whole, whole_dir = local
    splitter = split_by_system if split == "system" else split_by_rows
    parts = splitter(pl.read_parquet(demo), tmp_path / "parts")
    assert len(list(parts.glob("*.parquet"))) == 8
    stages: list[str] = []
    result = check_on_dask(parts, tmp_path / "run", client=client, progress=_stages(stages))
    assert ("shuffle" in stages) is (split == "rows")  # the run says whether it shuffled
    assert ("systems" in stages) is (split == "system")
    assert_same_findings(result.findings, whole.findings)
    assert result.artefacts.equals(whole.artefacts)
    assert result.coverage.equals(whole.coverage)
    assert {k: v for k, v in result.summary.items() if k != "seconds"} == {
        k: v for k, v in whole.summary.items() if k != "seconds"}
    assert_same_aggregates(compute_aggregates(tmp_path / "run"), compute_aggregates(whole_dir))


def test_a_split_by_rows_spans_partitions_and_one_by_system_does_not(
        client: Any, demo: Path, by_rows: Path, tmp_path: Path) -> None:
    import dask.dataframe as dd

    by_system = split_by_system(pl.read_parquet(demo), tmp_path / "sys")
    for folder, spans in ((by_rows, True), (by_system, False)):
        frame = dd.read_parquet(str(folder), split_row_groups=False)
        assert spans_partitions(frame, "system") is spans


def test_a_worker_killed_mid_run_is_retried_and_the_result_is_unchanged(
        client: Any, by_rows: Path, tmp_path: Path) -> None:
    calm = check_on_dask(by_rows, tmp_path / "calm", client=client)
    pids = list(client.run(os.getpid).values())
    killed: list[int] = []

    def kill_once(stage: str, done: float, /, rows: int | None = None) -> None:
        if stage == "rules" and not killed:  # partitions are being checked on the workers
            killed.append(pids[0])
            os.kill(pids[0], signal.SIGKILL)

    stormy = check_on_dask(by_rows, tmp_path / "stormy", client=client, progress=kill_once)
    assert killed
    assert pids[0] not in client.run(os.getpid).values()  # the nanny started a new process
    assert findings_key(stormy.findings).equals(findings_key(calm.findings))
    assert stormy.summary["rows"] == calm.summary["rows"] == BODIES
    client.wait_for_workers(2)


def test_a_bad_file_gives_the_same_one_line_error_as_locally(
        client: Any, by_rows: Path, tmp_path: Path) -> None:
    folder = tmp_path / "parts"
    folder.mkdir()
    for part in by_rows.glob("*.parquet"):
        (folder / part.name).write_bytes(part.read_bytes())
    damaged = folder / "part-5.parquet"
    damaged.write_bytes(damaged.read_bytes()[: damaged.stat().st_size // 2])
    with pytest.raises(IngestError) as locally:
        check_dataset(folder, tmp_path / "local")
    with pytest.raises(IngestError) as on_dask:
        check_on_dask(folder, tmp_path / "dask", client=client)
    assert str(on_dask.value) == str(locally.value)
    assert str(locally.value).startswith("part-5.parquet: ") and "\n" not in str(locally.value)


def test_cli_writes_a_run_folder_the_dashboard_lists(by_rows: Path, tmp_path: Path,
                                                     capsys: pytest.CaptureFixture[str]) -> None:
    from bodycensus.cli.main import main
    from bodycensus.storage.store import Store

    out = tmp_path / "out"
    code = main(["check", str(by_rows), "--engine", "dask", "--out", str(out),
                 "--format", "json", "--progress"])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    assert "Dask shuffles the bodies by system first" in captured.err
    document = json.loads(captured.out)
    assert document["summary"]["rows"] == BODIES
    manifest = json.loads((out / "manifest.json").read_text())
    assert manifest["status"] == "ready" and manifest["name"] == "rows0/ (8 files)"
    assert (out / "aggregates.json").is_file() and (out / "names.parquet").is_file()
    assert (out / "body_index.parquet").is_file()  # a body's page reads its partition only
    assert (out / "systems.parquet").is_file() and (out / "system_index.parquet").is_file()
    store = Store(tmp_path / "data")
    added = store.add_run(out)
    assert [m.id for m in store.list()] == [added.id == manifest["id"] and added.id]
    assert store.add_run(out).id == added.id  # adding it again shows the same catalogue
    assert (store.ready_dir(added.id) / "findings.parquet").stat().st_ino == (
        out / "findings.parquet").stat().st_ino  # linked, not copied


def test_cli_uses_an_existing_scheduler(client: Any, by_rows: Path, local: tuple[CheckResult, Path],
                                        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    from bodycensus.cli.main import main

    def transitions(dask_scheduler: Any) -> int:
        return int(dask_scheduler.transition_counter)

    before = client.run_on_scheduler(transitions)
    code = main(["check", str(by_rows), "--engine", "dask", "--scheduler",
                 client.scheduler.address, "--format", "csv", "--quiet"])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    assert len(pl.read_csv(captured.out.encode())) == local[0].findings.height
    assert client.run_on_scheduler(transitions) > before + 100  # its tasks ran on this cluster


def test_scheduler_needs_the_dask_engine(by_rows: Path, capsys: pytest.CaptureFixture[str]
                                         ) -> None:
    from bodycensus.cli.main import main

    assert main(["check", str(by_rows), "--scheduler", "tcp://127.0.0.1:8786"]) == 2
    assert capsys.readouterr().err == "bodycensus check: --scheduler needs --engine dask\n"


def test_facts_from_dask_reductions_equal_the_local_passes(client: Any, by_rows: Path,
                                                           tmp_path: Path) -> None:
    from polars.testing import assert_frame_equal, assert_series_equal

    from bodycensus.engines.dask.facts import facts_on_dask
    from bodycensus.engines.partition import catalogue_facts
    from bodycensus.input.dataset import ingest_dataset
    from bodycensus.science.rules.orbit import OrbitSettings

    parts, _ = ingest_dataset(sorted(by_rows.glob("*.parquet")), tmp_path / "normalised")
    local, _ = catalogue_facts(pl.scan_parquet(parts))
    import dask.dataframe as dd

    frame = dd.read_parquet([str(p) for p in parts], split_row_groups=False,
                            dtype_backend="pyarrow")
    on_dask, _ = facts_on_dask(frame, parts, {}, OrbitSettings())
    assert on_dask.families == local.families
    assert on_dask.context.duplicate_ids.height > 0  # the demo plants duplicated ids
    assert_frame_equal(on_dask.context.duplicate_ids.sort("id"),
                       local.context.duplicate_ids.sort("id"))
    assert_frame_equal(on_dask.context.label_statistics.sort("label"),
                       local.context.label_statistics.sort("label"), check_exact=True)
    assert_series_equal(on_dask.context.cycle_ids.sort(), local.context.cycle_ids.sort())
