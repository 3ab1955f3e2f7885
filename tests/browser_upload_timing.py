"""Hand-run: upload a catalogue file through the browser, watch the progress bar, then time the
first diagram painted (issue 10's browser targets on the 10M demo).

    python tests/browser_upload_timing.py FILE DATA_DIR [--shots DIR]
    python tests/browser_upload_timing.py RUN_FOLDER DATA_DIR --add-run   # no upload: time only

``bodycensus serve`` runs in a subprocess on a free loopback port with DATA_DIR (delete it
afterwards); headless Debian Chromium (Playwright, every non-loopback request aborted) opens the
Catalogues screen, chooses FILE in the upload box and samples the progress bar every 0.2 s until
the overview opens. Then it opens the overview and the Diagrams screen afresh, each timed from the
navigation to the overview's tables shown and to the first plotly figure drawn
(``data-drawn="true"``, set when ``Plotly.newPlot`` resolves). Prints one JSON document.
"""

from __future__ import annotations

import argparse
import json
import os
import re
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import httpx
from playwright.sync_api import Error, Page, sync_playwright
from web_support import free_port

sys.path.insert(0, str(Path(__file__).resolve().parent / "browser"))
from conftest import ARGS, CHROMIUM, new_context  # noqa: E402

READ_BAR = """() => ({bar: document.getElementById('upload-progress').value,
                     stage: document.getElementById('upload-stage').textContent})"""


def _serve(data_dir: Path, add: list[str]) -> tuple[subprocess.Popen[bytes], str]:
    port = free_port()
    env = {k: v for k, v in os.environ.items() if k != "BODYCENSUS_TOKEN"}
    process = subprocess.Popen(
        [sys.executable, "-m", "bodycensus", "serve", "--host", "127.0.0.1", "--port",
         str(port), "--data-dir", str(data_dir), *add], env=env, stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL)
    base, deadline = f"http://127.0.0.1:{port}", time.monotonic() + 60
    while True:
        try:
            httpx.get(f"{base}/api/catalogues", timeout=5)
            return process, base
        except httpx.TransportError:
            assert process.poll() is None and time.monotonic() < deadline, "no server"
            time.sleep(0.2)


def _watch(page: Page, started: float, shots: Path) -> list[dict[str, Any]]:
    """The progress bar's value and stage, sampled until the overview opens."""
    seen: list[dict[str, Any]] = []
    while "/catalogues/" not in page.url:
        try:
            state = page.evaluate(READ_BAR)
        except Error:  # navigating to the overview
            break
        state["t"] = round(time.monotonic() - started, 1)
        if not seen or (state["stage"], round(state["bar"], 2)) != (
                seen[-1]["stage"], round(seen[-1]["bar"], 2)):
            seen.append(state)
            if len(seen) in (5, 40):
                page.screenshot(path=shots / f"upload-progress-{len(seen)}.png")
        page.wait_for_timeout(200)
    return seen


def _timed(page: Page, url: str, selector: str) -> float:
    started = time.monotonic()
    page.goto(url)
    page.wait_for_selector(selector, state="attached", timeout=120_000)
    return round(time.monotonic() - started, 3)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("file", type=Path)
    parser.add_argument("data_dir", type=Path)
    parser.add_argument("--shots", type=Path, default=Path("test-artifacts/screenshots"))
    parser.add_argument("--add-run", action="store_true", help="FILE is a run folder to show")
    args = parser.parse_args()
    args.shots.mkdir(parents=True, exist_ok=True)
    process, base = _serve(args.data_dir, ["--add-run", str(args.file)] if args.add_run else [])
    try:
        with sync_playwright() as playwright:
            browser = playwright.chromium.launch(executable_path=CHROMIUM, args=ARGS)
            context = new_context(browser)
            page = context.new_page()
            if args.add_run:
                cat = httpx.get(f"{base}/api/catalogues").json()["items"][0]["id"]
                overview = f"{base}/catalogues/{cat}"
                result = _opened(page, overview, args.shots)
            else:
                result = _uploaded(page, base, args.file, args.shots)
            context.close()
            browser.close()
        print(json.dumps(result, indent=1))
    finally:
        process.terminate()
        process.wait(timeout=60)


def _opened(page: Page, overview: str, shots: Path) -> dict[str, Any]:
    """The overview and the first diagram, each opened three times afresh and timed."""
    found = {"overview_s": [_timed(page, overview, "#by-severity") for _ in range(3)],
             "first_diagram_s": [_timed(page, f"{overview}/diagrams", "[data-drawn='true']")
                                 for _ in range(3)]}
    page.screenshot(path=shots / "upload-first-diagram.png")
    return found


def _uploaded(page: Page, base: str, file: Path, shots: Path) -> dict[str, Any]:
    """The upload with its progress until the catalogue is ready, then ``_opened``."""
    page.goto(f"{base}/")
    started = time.monotonic()
    page.set_input_files("#file-input", str(file))
    seen = _watch(page, started, shots)
    page.wait_for_url(re.compile(r"/catalogues/[^/?]+$"), timeout=3_600_000)
    page.wait_for_function("document.getElementById('catalogue-status')?.textContent === 'ready'",
                           timeout=3_600_000, polling=500)
    ready = round(time.monotonic() - started, 1)
    page.screenshot(path=shots / "upload-overview.png")
    return {"file": str(file), "bytes": file.stat().st_size, "upload_to_ready_s": ready,
            "progress_samples": len(seen),
            "uploading": [s for s in seen if s["stage"].startswith("Uploading")][::10],
            "stages": sorted({s["stage"].split(":")[0] for s in seen}),
            **_opened(page, page.url, shots)}


if __name__ == "__main__":
    main()
