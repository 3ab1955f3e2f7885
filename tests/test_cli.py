"""``bodycensus check`` against the headless contract in DESIGN.md, run as a real process."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

HEADER = "id,type,orbits,mass (earth_mass),radius_km,a (au),e,period_days\n"
CLEAN = ("sol,yellow dwarf star,,332946,695700,,,\n"
         "terra,terrestrial planet,sol,1,6371,1,0.0167,365.256\n")
# density ~23,000: Seager iron 11,200
IRON_IMPOSSIBLE = "lead,terrestrial planet,sol,1,4000,2,0.01,\n"


def bodycensus(*args: str) -> subprocess.CompletedProcess[str]:
    """Run the installed command line in a fresh interpreter."""
    return subprocess.run([sys.executable, "-m", "bodycensus", *args], capture_output=True,
                          text=True, timeout=120, check=False)


@pytest.fixture()
def clean_csv(tmp_path: Path) -> Path:
    path = tmp_path / "clean.csv"
    path.write_text(HEADER + CLEAN)
    return path


@pytest.fixture()
def broken_csv(tmp_path: Path) -> Path:
    path = tmp_path / "broken.csv"
    path.write_text(HEADER + CLEAN + IRON_IMPOSSIBLE)
    return path


def test_json_has_the_contract_shape(broken_csv: Path) -> None:
    done = bodycensus("check", str(broken_csv), "--format", "json")
    assert done.returncode == 0, done.stderr
    document = json.loads(done.stdout)
    assert set(document) == {"catalogue", "summary", "findings", "artefacts"}
    assert document["summary"]["rows"] == 3
    finding = next(f for f in document["findings"] if f["rule"] == "denser-than-iron")
    assert set(finding) >= {"body", "rule", "severity", "value", "limit", "unit", "margin",
                            "message", "source"}
    assert finding["body"] == "lead" and finding["severity"] == "impossible"
    assert document["catalogue"]["mapping"]["choices"]["radius"]["unit"] == "km"


def test_fail_on_sets_the_exit_code(clean_csv: Path, broken_csv: Path) -> None:
    assert bodycensus("check", str(broken_csv), "--fail-on", "impossible").returncode == 1
    assert bodycensus("check", str(broken_csv), "--fail-on", "error").returncode == 0
    assert bodycensus("check", str(clean_csv), "--fail-on", "note").returncode == 0


def test_bad_input_exits_2_with_one_line(tmp_path: Path) -> None:
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    for args in (("check", str(empty)), ("check", str(tmp_path / "missing.csv")),
                 ("check", str(empty), "--unit", "mass=furlong")):
        done = bodycensus(*args)
        assert done.returncode == 2, args
        assert done.stderr.count("\n") == 1 and done.stderr.startswith("bodycensus check:")
        assert "Traceback" not in done.stderr


def test_map_and_unit_overrides(tmp_path: Path) -> None:
    path = tmp_path / "odd.csv"
    path.write_text("designation,kind,host,heft,size,dist\nsol,yellow dwarf star,,1,1,\n"
                    "terra,terrestrial planet,sol,0.000003003,0.009158,1\n")
    done = bodycensus("check", str(path), "--map", "id=designation", "--map", "mass=heft",
                      "--map", "radius=size", "--unit", "mass=solar_mass",
                      "--unit", "radius=solar_radius", "--map", "semi_major_axis=dist",
                      "--unit", "semi_major_axis=au", "--format", "json")
    assert done.returncode == 0, done.stderr
    document = json.loads(done.stdout)
    assert document["findings"] == []
    assert document["catalogue"]["mapping"]["choices"]["mass"]["column"] == "heft"


def test_csv_and_table_formats(broken_csv: Path) -> None:
    csv_out = bodycensus("check", str(broken_csv), "--format", "csv").stdout.splitlines()
    assert csv_out[0].startswith("body,rule,severity,value,limit,unit,margin,message,source")
    assert any(line.startswith("lead,denser-than-iron,impossible") for line in csv_out)
    table = bodycensus("check", str(broken_csv)).stdout
    assert "3 bodies" in table and "denser-than-iron" in table


def test_every_command_has_help() -> None:
    for command in ("serve", "check", "demo", "bench"):
        done = bodycensus(command, "--help")
        assert done.returncode == 0 and "usage: bodycensus " + command in done.stdout
