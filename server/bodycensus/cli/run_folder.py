"""A checked run as a folder the dashboard opens: ``bodycensus check DATASET --out DIR``.

The engine leaves its Parquet files (bodies, findings, artefacts, coverage) in DIR; this adds what
a ready catalogue of the data directory holds beside them (``aggregates.json``, the name and body
indexes, the table and index of systems and ``manifest.json``), so ``bodycensus serve --add-run
DIR`` shows it without reading raw rows again.
"""

from __future__ import annotations

from pathlib import Path

from bodycensus.dashboard.screens.bodies import write_bodies_by_row
from bodycensus.dashboard.screens.systems import write_systems
from bodycensus.diagrams.aggregates import compute_aggregates
from bodycensus.engines.local import CheckOptions, CheckResult
from bodycensus.storage.manifest import Manifest
from bodycensus.storage.names import write_name_index
from bodycensus.storage.runs import scan_bodies, write_body_index
from bodycensus.storage.store import MANIFEST, new_slug, now, write_json_atomic


def write_run_folder(result: CheckResult, folder: Path, name: str,
                     options: CheckOptions) -> Manifest:
    """Write the aggregates, the name and body indexes, the systems' table and index, the
    bodies in the file's order and a ready manifest into ``folder``."""
    write_json_atomic(folder / "aggregates.json",
                      compute_aggregates(folder, options.orbit_settings))
    write_name_index(scan_bodies(folder), folder)
    write_body_index(folder)
    write_systems(folder)
    write_bodies_by_row(folder)
    manifest = Manifest(
        id=new_slug(), name=name, status="ready", created=now(), source="",
        progress={"stage": "done", "fraction": 1.0}, rows=result.summary["rows"],
        summary=result.summary,
        mapping=result.report.to_json() if result.report is not None else None,
        options={"map": dict(options.map_overrides), "units": dict(options.unit_overrides),
                 "families": dict(options.family_overrides)})
    write_json_atomic(folder / MANIFEST, manifest.to_json())
    return manifest
