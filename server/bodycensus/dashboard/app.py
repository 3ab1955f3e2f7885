"""The app factory: ``create_app(settings)`` builds the FastAPI app; ``serve`` runs it in uvicorn.

Nothing is built at import. The lifespan opens the store (recovering from a crash) and the
ingest executor once and hands them to routes through ``deps``. Static files, including
plotly.js from the installed plotly package, are served locally: no page needs another host.
"""

from __future__ import annotations

from collections.abc import AsyncIterator
from concurrent.futures import ThreadPoolExecutor
from contextlib import asynccontextmanager
from importlib.resources import files
from pathlib import Path

import uvicorn
from fastapi import FastAPI
from fastapi.responses import FileResponse
from fastapi.staticfiles import StaticFiles

from bodycensus import __version__
from bodycensus.dashboard.answers import KeptAnswers
from bodycensus.dashboard.error_pages import install_error_handlers
from bodycensus.dashboard.intake.jobs import Jobs, add_catalogue
from bodycensus.dashboard.routes import api, compare, lists, manage, pages, triage
from bodycensus.dashboard.security import auth
from bodycensus.dashboard.security.guard import Guard
from bodycensus.dashboard.settings import Settings
from bodycensus.errors import BadInput
from bodycensus.input.formats import catalogue_suffix
from bodycensus.storage.presets import Presets
from bodycensus.storage.store import Store

DEMO_NAME = "Demo catalogue"
_SAMPLE_DATA = Path(__file__).resolve().parents[3] / "sample_data"  # in a checkout only


def plotly_js() -> Path:
    """plotly.min.js as shipped in the installed plotly package."""
    return Path(str(files("plotly") / "package_data" / "plotly.min.js"))


def static_dir() -> Path:
    """The packaged web/static folder (``bodycensus.web``)."""
    return Path(str(files("bodycensus.web") / "static"))


def _bundled_demo() -> Path | None:
    """The demo file in the checkout's sample_data/, if there is one."""
    if not _SAMPLE_DATA.is_dir():
        return None
    found = sorted(p for p in _SAMPLE_DATA.iterdir() if p.is_file() and "truth" not in p.name
                   and catalogue_suffix(p.name) is not None)
    return found[0] if found else None


def ensure_demo(store: Store, jobs: Jobs) -> None:
    """Add the demo catalogue through the normal job path unless a usable one exists."""
    if any(m.demo and m.status != "failed" for m in store.list()):
        return
    bundled = _bundled_demo()
    if bundled is not None:
        add_catalogue(store, jobs, bundled, DEMO_NAME, demo=True)
        return
    from bodycensus.demo import write_demo

    generated = write_demo(store.scratch("-demo.csv"), n_bodies=20_000, seed=7)
    try:
        add_catalogue(store, jobs, generated[0], DEMO_NAME, demo=True)
    finally:
        for path in generated:
            path.unlink(missing_ok=True)


@asynccontextmanager
async def _lifespan(app: FastAPI) -> AsyncIterator[None]:
    """Open the store and the ingest executor for the app's lifetime."""
    settings: Settings = app.state.settings
    store = Store(settings.data_dir)
    executor = ThreadPoolExecutor(max_workers=settings.workers, thread_name_prefix="ingest")
    jobs = Jobs(store, settings, executor)
    app.state.store, app.state.jobs = store, jobs
    app.state.presets = Presets(store.db_path)
    try:
        if settings.demo:
            ensure_demo(store, jobs)
        yield
    finally:
        jobs.shutdown()


def create_app(settings: Settings) -> FastAPI:
    """The dashboard app for ``settings``: JSON API, pages, static files, one error shape, and
    the gate (token, cross-site checks, security headers) in front of all of them."""
    app = FastAPI(title="bodycensus", version=__version__, lifespan=_lifespan,
                  openapi_url="/api/openapi.json", docs_url=None, redoc_url=None,
                  description="Find the bodies that physics rules out in catalogues of "
                              "planets, moons and stars.")
    app.state.settings = settings
    app.state.templates = getattr(pages, "templates", None)
    install_error_handlers(app)
    app.add_middleware(KeptAnswers)  # inside the gate: added first
    app.add_middleware(Guard, token=settings.token,
                       allowed_hosts=frozenset(settings.allowed_hosts))
    app.include_router(auth.router)
    app.include_router(api.router)
    app.include_router(triage.api)
    app.include_router(compare.api)
    app.include_router(manage.api)
    app.include_router(pages.router)
    app.include_router(triage.router)
    app.include_router(compare.router)
    app.include_router(lists.router)
    app.include_router(manage.router)

    @app.get("/static/vendor/plotly.min.js", include_in_schema=False)
    def plotly() -> FileResponse:
        return FileResponse(plotly_js(), media_type="text/javascript",
                            headers={"Cache-Control": "public, max-age=86400"})

    app.mount("/static", StaticFiles(directory=static_dir()), name="static")
    return app


def serve(settings: Settings) -> None:
    """Run the dashboard in uvicorn until interrupted (``bodycensus serve``); refuse settings
    that would expose it (another host without a token)."""
    problem = settings.listen_problem()
    if problem is not None:
        raise BadInput(problem)
    uvicorn.run(create_app(settings), host=settings.host, port=settings.port, log_level="info")
