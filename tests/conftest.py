"""Shared test set-up: astropy, a reference library in the physics tests, must stay offline."""

from __future__ import annotations

import astropy.utils.iers

# Tests run offline: astropy must not try to fetch Earth-orientation tables.
astropy.utils.iers.conf.auto_download = False
