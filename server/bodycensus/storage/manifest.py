"""What ``manifest.json`` holds for one catalogue: the ``Manifest`` and the shape of each record
in it, for the store that writes them and the dashboard that reads them.

How the file was read and the mapping step's proposal are declared by the input floor that makes
them (``IngestRecord``, ``ProposalRecord``); progress, the run's overrides and the engine's
summary are declared here. ``tests/test_manifest.py`` checks that what the producers write has
exactly these keys.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any, Literal, NotRequired, TypedDict

from bodycensus.input.ingest import IngestRecord
from bodycensus.input.sniff import ProposalRecord

Status = Literal["mapping", "ingesting", "ready", "failed"]


class ProgressRecord(TypedDict):
    """How far the run is: the stage and a fraction (0..1) of the whole run."""

    stage: str
    fraction: float


class OverridesRecord(TypedDict):
    """The person's choices a run used: field -> column, field -> unit, label -> family."""

    map: dict[str, str]
    units: dict[str, str]
    families: dict[str, str]
    hosts: NotRequired[dict[str, str]]  # host field -> column (one row per planet)
    host_units: NotRequired[dict[str, str]]  # host field -> unit
    nulls: NotRequired[list[str]]  # cell texts that mean "no value"


class RunSummary(TypedDict):
    """The engine's counts of one run (``engines.summary.build_summary``)."""

    rows: int
    findings: int
    bodies_with_findings: int
    by_severity: dict[str, int]  # every severity, most serious first
    by_rule: dict[str, int]  # most common first, as are the three below
    by_label: dict[str, int]
    by_family: dict[str, int]
    label_families: dict[str, str]  # label -> family used
    unmapped_labels: list[str]  # labels with family unknown
    artefacts: int
    bad_cells: dict[str, int]  # source column -> unreadable cells
    # how the file was read: renamed columns, units taken as SI or from metadata, host rows
    reading_notes: NotRequired[list[str]]
    seconds: NotRequired[float]  # wall time of a whole run from the file


class ManifestChanges(TypedDict, total=False):
    """The fields of a manifest that a step of its run may change (``Store.update``)."""

    status: Status
    progress: ProgressRecord
    rows: int | None
    error: str | None
    mapping: IngestRecord | None
    proposal: ProposalRecord | None
    summary: RunSummary | None
    options: OverridesRecord | None
    preset: str | None


def _default_progress() -> ProgressRecord:
    return {"stage": "upload", "fraction": 0.0}


@dataclass(frozen=True)
class Manifest:
    """What the store knows of one catalogue (``manifest.json``)."""

    id: str
    name: str
    status: Status
    created: str
    source: str = ".csv"  # the upload's suffix, e.g. ".csv.gz"
    progress: ProgressRecord = field(default_factory=_default_progress)
    rows: int | None = None
    error: str | None = None
    mapping: IngestRecord | None = None  # how a ready catalogue was read
    proposal: ProposalRecord | None = None  # the mapping step, while status is `mapping`
    summary: RunSummary | None = None
    options: OverridesRecord | None = None  # the overrides the run used (map, units, families)
    demo: bool = False
    preset: str | None = None  # the mapping preset the run used: when and from which file
    run: int = 1  # 1 for the upload's first run; each re-run (same file, new mapping) adds one

    def to_json(self) -> dict[str, Any]:
        """A plain dict, as written to manifest.json."""
        return asdict(self)

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> Manifest:
        """Read a manifest dict, ignoring keys this version does not know."""
        known = {k: v for k, v in data.items() if k in cls.__dataclass_fields__}
        return cls(**known)
