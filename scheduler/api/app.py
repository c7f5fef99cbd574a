"""The FastAPI application: routers, error mapping, and the background loops it owns.

Start-up order: wait for the database, migrate, then serve. With a broker, jobs are published to
Celery and this process only sweeps stale jobs; without one, it also runs jobs in-process.
"""

from __future__ import annotations

import functools
import logging
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager

from fastapi import FastAPI

from scheduler import web
from scheduler.api import batches, flags, health
from scheduler.api.errors import install_error_handlers
from scheduler.settings import Settings, get_settings

__all__ = ["create_app"]

log = logging.getLogger(__name__)

DESCRIPTION = """
Submit furnace batches, follow them, review flagged parts and rerun with new soak times.

**Predictions are estimates for planning.** Furnace and quench-tank work follows the site's procedures,
the applicable heat-treatment and pyrometry specifications and the judgement of qualified metallurgists;
a passing prediction never replaces load thermocouples or hardness checks.

Every endpoint but `/health` needs `Authorization: Bearer TOKEN` (`soakline token create`).
Planners submit and rerun, reviewers record dispositions, every role reads.
"""


def _dispatcher(app: FastAPI, settings: Settings) -> None:
    if settings.broker_url is not None:
        from sqlalchemy import update

        from models.tables import Job, JobStatus, utcnow
        from scheduler.store import session_factory, session_scope
        from workers.celery_app import configure
        from workers.tasks import publish

        configure(settings)

        def dispatch(job_ids: list[int]) -> None:
            unsent = publish(job_ids, settings)
            if unsent:  # make them stale now, so the sweeper sends them once the broker is back
                try:
                    with session_scope(session_factory(settings)) as session:
                        session.execute(
                            update(Job)
                            .where(Job.id.in_(unsent), Job.status == JobStatus.QUEUED)
                            .values(deadline=utcnow())
                        )
                except Exception as exc:
                    log.warning("could not mark %d unsent job(s): %s", len(unsent), exc)

        app.state.dispatch = dispatch
    else:
        app.state.dispatch = lambda _ids: app.state.runner.wake() if app.state.runner else None


def create_app(settings: Settings | None = None, *, background: bool = True) -> FastAPI:
    """Build the API. ``background=False`` (tests) skips start-up migration, sweeper and runner."""
    settings = settings or get_settings()

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        sweeper = None
        if background:
            from scheduler.store import migrate, wait_for_database
            from workers.background import InProcessRunner, Sweeper

            wait_for_database(settings, log=log.warning)
            migrate(settings)
            from workers.background import Publish

            publish: Publish | None = None
            if settings.broker_url is not None:
                from workers import tasks

                publish = functools.partial(tasks.publish, settings=settings)
            else:
                app.state.runner = InProcessRunner(settings)
                app.state.runner.start()
            sweeper = Sweeper(settings, publish)
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
    app.state.runner = None
    _dispatcher(app, settings)
    install_error_handlers(app)
    app.include_router(batches.router)
    app.include_router(flags.router)
    app.include_router(health.router)
    app.include_router(web.router)
    return app
