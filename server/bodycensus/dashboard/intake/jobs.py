"""Background ingest jobs: run the engine and the aggregates for an upload, recording progress.

Each job runs in a worker thread of a small executor created in the app's lifespan. The engine
writes into the catalogue's work folder; only when everything (Parquet, aggregates.json,
manifest) is written does the store rename the folder into ``catalogues/``. Any failure leaves
a ``failed`` manifest with a one-line reason and no partial catalogue.
"""

from __future__ import annotations

import logging
import math
import shutil
import time
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

from bodycensus.dashboard.screens.bodies import write_bodies_by_row
from bodycensus.dashboard.screens.systems import write_systems
from bodycensus.dashboard.settings import Settings
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.engines.local import CheckOptions, check_file
from bodycensus.errors import BadInput, BodycensusError, one_line, storage_error
from bodycensus.input.formats import catalogue_suffix
from bodycensus.input.hosts import HostColumns
from bodycensus.input.ingest import IngestLimits
from bodycensus.input.schema import guess_mapping
from bodycensus.science.families import FAMILIES
from bodycensus.storage.manifest import Manifest, OverridesRecord
from bodycensus.storage.names import write_name_index
from bodycensus.storage.runs import scan_bodies, write_body_index
from bodycensus.storage.store import Store, now, write_json_atomic

log = logging.getLogger(__name__)

# Share of the whole run given to each stage, for one progress bar: (start, end).
STAGES: dict[str, tuple[float, float]] = {
    "read": (0.0, 0.45), "derive": (0.45, 0.55), "rules": (0.55, 0.75),
    "artefacts": (0.75, 0.88), "write": (0.88, 0.92), "aggregates": (0.92, 1.0),
}
CANCELLED = "the server stopped before this ingest started; upload the file again"


@dataclass(frozen=True)
class Overrides:
    """The person's choices in the mapping step: field -> column, field -> unit, label -> family."""

    map: dict[str, str] = field(default_factory=dict)
    units: dict[str, str] = field(default_factory=dict)
    families: dict[str, str] = field(default_factory=dict)
    hosts: dict[str, str] = field(default_factory=dict)  # host field -> column
    host_units: dict[str, str] = field(default_factory=dict)
    nulls: tuple[str, ...] = ()

    def checked(self, columns: list[str]) -> Overrides:
        """These overrides if they fit the file's ``columns``; SchemaError or BadInput if not."""
        hosts = HostColumns(self.hosts, self.host_units)
        if hosts:
            hosts.check(columns)
        host_columns = set(self.hosts.values())
        mapping = guess_mapping([c for c in columns if c not in host_columns], self.map,
                                self.units)
        if "id" not in mapping.choices:
            raise BadInput("no column is mapped to id; choose the column that identifies each "
                           "body", 422)
        for label, family in self.families.items():
            if family not in FAMILIES:
                raise BadInput(f"family '{family[:40]}' for label '{label[:40]}' is unknown; use "
                               f"one of {', '.join(FAMILIES)}", 422)
        return self

    def to_record(self) -> OverridesRecord:
        """The overrides as the manifest keeps them."""
        record: OverridesRecord = {"map": dict(self.map), "units": dict(self.units),
                                   "families": dict(self.families)}
        if self.hosts:
            record["hosts"], record["host_units"] = dict(self.hosts), dict(self.host_units)
        if self.nulls:
            record["nulls"] = list(self.nulls)
        return record

    def options(self, settings: Settings) -> CheckOptions:
        """The engine options for these overrides under the server's limits."""
        limits = IngestLimits(max_decompressed_bytes=settings.max_decompressed_bytes,
                              max_rows=settings.max_rows, max_columns=settings.max_columns)
        return CheckOptions(map_overrides=self.map, unit_overrides=self.units,
                            family_overrides=self.families, limits=limits,
                            hosts=HostColumns(self.hosts, self.host_units), nulls=self.nulls)


class _ProgressRecorder:
    """The engine's progress callback: one fraction for the whole run, written now and then."""

    def __init__(self, store: Store, cat_id: str) -> None:
        self.store, self.cat_id = store, cat_id
        self.last: tuple[str | None, float, float] = (None, -1.0, 0.0)  # stage, overall, time

    def __call__(self, stage: str, fraction: float, rows: int | None = None) -> None:
        start, end = STAGES.get(stage, (0.0, 1.0))
        within = min(max(float(fraction), 0.0), 1.0) if math.isfinite(fraction) else 0.0
        overall = start + (end - start) * within
        last_stage, last_overall, last_time = self.last
        recent = time.monotonic() - last_time < 1.0
        if stage == last_stage and overall - last_overall < 0.02 and recent:
            return
        self.last = (stage, overall, time.monotonic())
        self.store.set_progress(self.cat_id, stage, overall)


def describe_failure(err: BaseException) -> str:
    """A one-line reason for a failed ingest that says what to do."""
    if isinstance(err, BodycensusError):
        return one_line(err.detail)
    if (disk := storage_error(err, retry="upload the file again")) is not None:
        return disk.detail  # polars reports a full disk as text
    if isinstance(err, MemoryError):
        return "the server ran out of memory; upload a smaller file or add memory"
    return one_line(f"internal error while checking ({type(err).__name__}); see the server log")


def run_check(store: Store, settings: Settings, cat_id: str, overrides: Overrides) -> Manifest:
    """Ingest, check and aggregate one uploaded catalogue, then publish it."""
    progress, options = _ProgressRecorder(store, cat_id), overrides.options(settings)
    work = store.workdir(cat_id)
    result = check_file(store.source_path(cat_id), work, options, progress)
    progress("aggregates", 0.0)
    write_json_atomic(work / "aggregates.json", compute_aggregates(work, options.orbit_settings))
    write_name_index(scan_bodies(work), work)
    write_body_index(work)
    write_systems(work)
    write_bodies_by_row(work)
    report = result.report.to_json() if result.report is not None else None
    return store.publish(cat_id, rows=result.summary["rows"], summary=result.summary,
                         mapping=report)


class Jobs:
    """Submits ingest jobs to the executor and turns every failure into a failed manifest."""

    def __init__(self, store: Store, settings: Settings, executor: ThreadPoolExecutor) -> None:
        self.store, self.settings, self.executor = store, settings, executor
        self.futures: dict[str, Future[None]] = {}

    def start(self, cat_id: str, overrides: Overrides) -> Manifest:
        """Move the catalogue from ``mapping`` to ``ingesting`` and queue its run."""
        manifest = self.store.claim(cat_id, "mapping", status="ingesting", error=None,
                                     options=overrides.to_record(),
                                     progress={"stage": "queued", "fraction": 0.0})
        self.futures[cat_id] = self.executor.submit(self._run, cat_id, overrides)
        return manifest

    def _run(self, cat_id: str, overrides: Overrides) -> None:
        """The job body: never raises; failures are written to the manifest."""
        try:
            run_check(self.store, self.settings, cat_id, overrides)
        except BaseException as err:  # the thread must record every failure, then end
            if not isinstance(err, BodycensusError):
                log.exception("ingest of %s failed", cat_id)
            manifest = self.store.get(cat_id)  # say the person's file name, not ours
            reason = describe_failure(err).replace(f"source{manifest.source}", manifest.name)
            self.store.fail(cat_id, reason)
        finally:
            self.futures.pop(cat_id, None)

    def shutdown(self) -> None:
        """Let a running job finish; fail the queued ones so none stays 'ingesting'."""
        queued = [cid for cid, fut in list(self.futures.items()) if fut.cancel()]
        self.executor.shutdown(wait=True, cancel_futures=True)
        for cat_id in queued:
            self.store.fail(cat_id, CANCELLED)


def add_catalogue(store: Store, jobs: Jobs, source: Path, name: str, demo: bool = False
                  ) -> Manifest:
    """Copy a local file in as a new catalogue and start its run with the guessed mapping."""
    suffix = catalogue_suffix(source.name) or source.suffix
    cat_id, dest = store.new_upload(suffix)
    shutil.copyfile(source, dest)
    store.open_upload(Manifest(id=cat_id, name=name, status="mapping", created=now(),
                               source=suffix, demo=demo))
    return jobs.start(cat_id, Overrides())

