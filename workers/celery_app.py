"""The Celery application: ``celery -A workers worker`` and ``soakline worker`` both run this one.

Configuration comes from :mod:`scheduler.settings` when first needed (not at import), so that importing
``workers`` never fails on the environment. Delivery is at-least-once and the database makes it
exactly-once in effect: messages are acknowledged after the task (late acks), go back to the queue when
a worker process dies, one message is prefetched at a time, and a single visibility timeout
(``SOAKLINE_VISIBILITY_TIMEOUT_S``) governs redelivery of unacknowledged messages in Redis.
At start-up a worker waits for the database, migrates it, and runs a sweeper thread that queues again
any job left without a result past its deadline.
"""

from __future__ import annotations

import logging
from typing import Any

from celery import Celery
from celery.signals import worker_init, worker_process_init, worker_ready, worker_shutdown

from scheduler.settings import Settings, get_settings

__all__ = ["TASK_NAME", "app", "celery_config", "configure"]

TASK_NAME = "soakline.run_job"
log = logging.getLogger(__name__)


def celery_config(settings: Settings) -> dict[str, Any]:
    """Celery settings derived from ours; the visibility timeout is set once, here."""
    transport = {
        "visibility_timeout": int(settings.visibility_timeout_s),
        "socket_connect_timeout": 5,
        "socket_timeout": 30,
    }
    return {
        "broker_url": settings.broker_url,
        "broker_transport_options": transport,
        "broker_connection_retry_on_startup": True,
        "broker_connection_max_retries": None,  # keep reconnecting: Redis restarts are survivable
        "task_ignore_result": True,  # results live in the database, never in the broker
        "result_backend": None,
        "task_default_queue": settings.queue,
        "task_serializer": "json",
        "accept_content": ["json"],
        "task_acks_late": True,
        "task_reject_on_worker_lost": True,
        "worker_prefetch_multiplier": 1,
        # A task whose connection dropped cannot be acknowledged: cancel it so it is redelivered.
        "worker_cancel_long_running_tasks_on_connection_loss": True,
        "task_publish_retry": True,
        "task_publish_retry_policy": {
            "max_retries": 3,
            "interval_start": 0.2,
            "interval_step": 0.5,
            "interval_max": 2.0,
        },
        "worker_hijack_root_logger": False,
    }


app = Celery("soakline", include=["workers.tasks"])
app.add_defaults(lambda: celery_config(get_settings()))


def configure(settings: Settings) -> None:
    """Point this process's app at ``settings`` instead of the environment (API built from settings)."""
    wanted = celery_config(settings)
    if all(app.conf.get(key) == value for key, value in wanted.items()):
        return
    app.conf.update(wanted)
    # Forget the connection pool made for the old URL (kombu keeps pools per URL; closing it would
    # break them for anyone else): Celery does the same after a fork.
    app._after_fork()


def _prepare_store(**_: Any) -> None:
    """Before the pool starts: insist on a broker, wait for the database, migrate it."""
    from scheduler.store import migrate, wait_for_database

    settings = get_settings()
    if settings.broker_url is None:
        raise SystemExit(
            "SOAKLINE_BROKER_URL is not set: a Celery worker needs a broker "
            "(e.g. redis://127.0.0.1:6379/0). Without one, `soakline serve` runs jobs itself."
        )
    wait_for_database(settings, log=log.warning)
    migrate(settings)


def _fresh_connections(**_: Any) -> None:
    """A forked pool process must not share the parent's database sockets."""
    from scheduler.store import engine_for

    engine_for(get_settings().database_url).dispose(close=False)


_sweeper: Any = None


def _start_sweeper(**_: Any) -> None:
    """Each worker also sweeps: stale jobs are re-queued even when no API process is running."""
    from workers.background import Sweeper
    from workers.tasks import publish

    global _sweeper
    _sweeper = Sweeper(get_settings(), publish=publish)
    _sweeper.start()


def _stop_sweeper(**_: Any) -> None:
    if _sweeper is not None:
        _sweeper.stop()


# Connected by call rather than decorator so that the handlers keep their type signatures.
worker_init.connect(_prepare_store, weak=False)
worker_process_init.connect(_fresh_connections, weak=False)
worker_ready.connect(_start_sweeper, weak=False)
worker_shutdown.connect(_stop_sweeper, weak=False)
