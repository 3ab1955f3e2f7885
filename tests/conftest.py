"""Shared test set-up: astropy (a reference library of the physics tests) stays offline, and
one small catalogue file for the API tests."""

from __future__ import annotations

import astropy.utils.iers
import pytest
from web_support import write_catalogue

# Tests run offline: astropy must not try to fetch Earth-orientation tables.
astropy.utils.iers.conf.auto_download = False


@pytest.fixture(scope="module")
def source(tmp_path_factory: pytest.TempPathFactory) -> bytes:
    """The bytes of a small generated catalogue CSV, for upload tests."""
    return write_catalogue(tmp_path_factory.mktemp("src") / "c.csv").read_bytes()
