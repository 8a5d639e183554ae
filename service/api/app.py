"""The application factory: it only assembles settings, store, runner, routes and handlers."""

from __future__ import annotations

import logging
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager

import haarline
from fastapi import FastAPI
from fastapi.middleware.cors import CORSMiddleware
from haarline.service.api.http import Compress, HeadAsGet
from haarline.service.api.limits import BodyLimit
from haarline.service.api.problems import install_handlers, install_openapi
from haarline.service.api.routes import docs, jobs, meta, notify, pages
from haarline.service.jobs.executor import Runner
from haarline.service.jobs.notify import Notifier
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

__all__ = ["create_app"]

log = logging.getLogger("haarline.service")

ROUTERS = (
    jobs.analyses,
    jobs.comparisons,
    notify.analysis_notes,
    notify.comparison_notes,
    notify.secrets,
    pages.router,
    meta.v1,
    meta.health,
    docs.router,
)


def create_app(settings: Settings | None = None, *, start_runner: bool = True) -> FastAPI:
    """Build the service from settings (default: from ``HAARLINE_*`` variables)."""
    settings = settings or Settings.from_env()
    store = Store(settings.database)
    store.initialize()
    runner = Runner(settings, store)
    notifier = Notifier(settings, store)

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        if settings.dev_mode:
            log.warning("DEVELOPMENT MODE: no API keys are checked; loopback only")
        if start_runner:
            runner.start()
            notifier.start()
        yield
        notifier.stop()
        runner.stop()

    app = FastAPI(
        title="haarline",
        version=haarline.__version__,
        summary="Score parameterized quantum circuits: expressibility, entangling capability, "
        "trainability and capacity.",
        lifespan=lifespan,
        docs_url=None,  # served from installed files by routes/docs.py
        redoc_url=None,
    )
    app.state.settings, app.state.store, app.state.runner = settings, store, runner
    app.state.notifier = notifier
    install_handlers(app)
    install_openapi(app)
    for router in ROUTERS:
        app.include_router(router)
    notify.document_webhook(app)
    app.mount(docs.ASSETS, docs.assets(), name="docs-assets")
    # every route with its methods, for the Allow header of a 405 (problems.py)
    app.state.routes = [*app.router.routes, *(r for router in ROUTERS for r in router.routes)]
    # innermost first: the body guard, gzip, HEAD as GET, then CORS when origins are listed
    app.add_middleware(BodyLimit, limit=settings.max_body_bytes, timeout=settings.read_timeout)
    app.add_middleware(Compress)
    app.add_middleware(HeadAsGet)
    if settings.cors_origins:
        app.add_middleware(
            CORSMiddleware,
            allow_origins=list(settings.cors_origins),
            allow_methods=["GET", "HEAD", "POST", "DELETE"],
            allow_headers=["Authorization", "Content-Type", "Idempotency-Key", "If-None-Match"],
            expose_headers=["ETag", "Location", "Retry-After", "Idempotent-Replayed"],
            max_age=600,
        )
    return app
