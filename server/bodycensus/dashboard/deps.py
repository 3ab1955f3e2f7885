"""Typed dependencies: the resources opened in the app's lifespan, handed to routes and pages."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

from fastapi import Depends, Request

from bodycensus.dashboard.intake.jobs import Jobs
from bodycensus.dashboard.settings import Settings
from bodycensus.storage.presets import Presets
from bodycensus.storage.store import Store


def get_settings(request: Request) -> Settings:
    """The settings the app was created with."""
    return request.app.state.settings


def get_store(request: Request) -> Store:
    """The data directory opened in the lifespan."""
    return request.app.state.store


def get_jobs(request: Request) -> Jobs:
    """The background ingest jobs."""
    return request.app.state.jobs


def get_presets(request: Request) -> Presets:
    """The mapping presets (SQLite, beside the saved views)."""
    return request.app.state.presets


SettingsDep = Annotated[Settings, Depends(get_settings)]
PresetsDep = Annotated[Presets, Depends(get_presets)]
StoreDep = Annotated[Store, Depends(get_store)]
JobsDep = Annotated[Jobs, Depends(get_jobs)]


def ready_catalogue(catalogue_id: str, store: StoreDep) -> Path:
    """The folder of the ready catalogue named in the path (404 or 409 otherwise)."""
    return store.ready_dir(catalogue_id)


ReadyDir = Annotated[Path, Depends(ready_catalogue)]
