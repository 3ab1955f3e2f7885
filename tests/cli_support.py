"""Test helper: run the installed command line in a fresh interpreter, and a tiny catalogue."""

from __future__ import annotations

import subprocess
import sys

HEADER = "id,type,orbits,mass (earth_mass),radius_km,a (au),e,period_days\n"
CLEAN = ("sol,yellow dwarf star,,332946,695700,,,\n"
         "terra,terrestrial planet,sol,1,6371,1,0.0167,365.256\n")
# density ~23,000: Seager iron 11,200
IRON_IMPOSSIBLE = "lead,terrestrial planet,sol,1,4000,2,0.01,\n"


def bodycensus(*args: str) -> subprocess.CompletedProcess[str]:
    """Run the installed command line in a fresh interpreter."""
    return subprocess.run([sys.executable, "-m", "bodycensus", *args], capture_output=True,
                          text=True, timeout=120, check=False)
