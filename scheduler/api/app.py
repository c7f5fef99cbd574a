"""The FastAPI application: routers, error mapping, and the background loops it owns.

Start-up order: wait for the database, migrate, then serve. With a broker, jobs are published to
Celery and this process only sweeps stale jobs; without one, it also runs jobs in-process.
"""

from __future__ import annotations

import logging
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager

from fastapi import FastAPI
from sqlalchemy import event
from uvicorn.middleware.proxy_headers import ProxyHeadersMiddleware

from models.settings import Settings, get_settings
from models.store import OutageLog, engine_for, migrate, wait_for_database
from scheduler import web
from scheduler.api import batches, flags, health, profiles
from scheduler.api.errors import install_error_handlers
from scheduler.api.guard import RequestGuard
from workers.background import InProcessRunner, Sweeper
from workers.dispatch import Dispatcher

__all__ = ["create_app"]

log = logging.getLogger(__name__)

DESCRIPTION = """
Submit furnace batches, follow them, review flagged parts and rerun with new soak times.

**Predictions are estimates for planning.** Furnace and quench-tank work follows the site's procedures,
the applicable heat-treatment and pyrometry specifications and the judgement of qualified metallurgists;
a passing prediction never replaces load thermocouples or hardness checks.

Every endpoint but `/health` needs `Authorization: Bearer TOKEN` (`soakline token create`).
Planners submit and rerun and store exchange profiles, reviewers record dispositions, every role
reads.
"""


def _dispatcher(settings: Settings) -> Dispatcher:
    """Where submitted jobs go: the broker when one is configured; else they wait in the job table for
    this process's runner (which becomes the dispatcher when it starts, see ``lifespan``)."""
    if settings.broker_url is not None:
        # Imported here: a service without a broker never loads Celery.
        from workers.celery_app import CeleryDispatcher, configure

        configure(settings)
        return CeleryDispatcher(settings)
    return lambda _ids: []


def create_app(settings: Settings | None = None, *, background: bool = True) -> FastAPI:
    """Build the API. ``background=False`` (tests) skips start-up migration, sweeper and runner."""
    settings = settings or get_settings()

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        sweeper = None
        if background:
            wait_for_database(settings, log=log.warning)
            migrate(settings)
            if settings.broker_url is None:
                app.state.runner = app.state.dispatch = InProcessRunner(settings)
                app.state.runner.start()
            sweeper = Sweeper(settings, app.state.dispatch)
            sweeper.start()
        try:
            yield
        finally:
            if sweeper is not None:
                sweeper.stop()
            if app.state.runner is not None:
                app.state.runner.stop()

    app = FastAPI(
        title="soakline",
        version="0.1.0",
        summary="Core and surface temperature predictions for furnace batches of steel parts.",
        description=DESCRIPTION,
        lifespan=lifespan,
    )
    app.state.settings = settings
    app.state.outage = outage = OutageLog(log, "api")
    # A new connection after an outage means the database is back: say so once.
    event.listen(engine_for(settings.database_url), "connect", lambda *_: outage.recovered())
    app.state.runner = None
    app.state.dispatch = _dispatcher(settings)
    install_error_handlers(app, pages=("/ui/", web.error_page))
    app.add_middleware(RequestGuard, max_body_bytes=settings.max_body_bytes)
    # A TLS proxy's X-Forwarded-Proto/-For are believed from SOAKLINE_TRUSTED_PROXIES only: the scheme
    # decides whether the pages' cookies are Secure (scheduler.web.csrf.cookie_secure). Outermost, so
    # that the guard and the pages see the client's scheme and address.
    app.add_middleware(ProxyHeadersMiddleware, trusted_hosts=settings.trusted_proxies)
    app.include_router(batches.router)
    app.include_router(flags.router)
    app.include_router(profiles.router)
    app.include_router(health.router)
    app.include_router(web.router)
    return app
