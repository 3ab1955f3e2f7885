"""Shared test set-up: astropy (a reference library of the physics tests) stays offline, one
small catalogue file for the API tests, and the aggregates of the hand-written engine output for
the diagram tests."""

from __future__ import annotations

from typing import Any

import astropy.utils.iers
import pytest
from engine_output import write_engine_output
from web_support import write_catalogue

from bodycensus.diagrams.aggregates import compute_aggregates

# Tests run offline: astropy must not try to fetch Earth-orientation tables.
astropy.utils.iers.conf.auto_download = False


@pytest.fixture(scope="module")
def source(tmp_path_factory: pytest.TempPathFactory) -> bytes:
    """The bytes of a small generated catalogue CSV, for upload tests."""
    return write_catalogue(tmp_path_factory.mktemp("src") / "c.csv").read_bytes()


@pytest.fixture(scope="session")
def engine_aggs(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """The aggregates of ``engine_output.write_engine_output`` (107 bodies, a few findings)."""
    return dict(compute_aggregates(write_engine_output(tmp_path_factory.mktemp("engine"))))
