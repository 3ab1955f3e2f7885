"""The web assets are found from an installed wheel as well as from the checkout."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

import bodycensus.dashboard.routes.pages

ROOT = Path(__file__).resolve().parents[1]
PROBE = """
import sys
from pathlib import Path
import bodycensus, bodycensus.dashboard.app, bodycensus.dashboard.routes.pages
from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.settings import Settings
assert Path(bodycensus.__file__).is_relative_to(sys.argv[1]), bodycensus.__file__
assert (bodycensus.dashboard.routes.pages.TEMPLATES_DIR / "base.html").is_file()
assert (bodycensus.dashboard.app.static_dir() / "app.css").is_file()
create_app(Settings(data_dir=Path(sys.argv[2])))
print("ok")
"""


def test_assets_found_from_the_checkout() -> None:
    assert bodycensus.dashboard.routes.pages.TEMPLATES_DIR == ROOT / "web" / "templates"


def test_assets_found_from_an_installed_wheel(tmp_path: Path) -> None:
    built = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", str(ROOT), "--no-deps",
         "-w", str(tmp_path / "dist"), "-q"], capture_output=True, text=True, check=False)
    assert built.returncode == 0, built.stderr
    wheel = next((tmp_path / "dist").glob("bodycensus-*.whl"))
    names = zipfile.ZipFile(wheel).namelist()
    assert "bodycensus/web/templates/base.html" in names
    assert "bodycensus/web/static/upload.js" in names
    zipfile.ZipFile(wheel).extractall(tmp_path / "site")
    probe = subprocess.run(
        [sys.executable, "-c", PROBE, str(tmp_path / "site"), str(tmp_path / "data")],
        env={"PYTHONPATH": str(tmp_path / "site"), "PATH": "/usr/bin:/bin"},
        capture_output=True, text=True, check=False, cwd=tmp_path)
    assert probe.stdout.strip() == "ok", probe.stderr
