"""The Celery side, kept thin: the app, the one task, publishing, and the worker's start-up hooks.

``celery -A workers worker`` and ``soakline worker`` both run this app. Configuration comes from
:mod:`models.settings` when first needed (not at import), so that importing ``workers`` never fails on
the environment. The task's message is a job id and nothing else; the work is
:func:`workers.runner.execute_job`. Delivery is at-least-once and the database makes it exactly-once in
effect: messages are acknowledged after the task (late acks), go back to the queue when a worker
process dies, one message is prefetched at a time, and a single visibility timeout
(``SOAKLINE_VISIBILITY_TIMEOUT_S``) governs redelivery of unacknowledged messages in Redis. At start-up
a worker waits for the database, migrates it, and runs a sweeper thread.
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from typing import Any

import kombu.exceptions
import redis.exceptions
from celery import Celery, Task
from celery.signals import worker_init, worker_process_init, worker_ready, worker_shutdown

from models import repository as jobs_repo
from models.settings import Settings, get_settings
from models.store import engine_for, migrate, session_factory, session_scope, wait_for_database
from workers.background import Sweeper
from workers.runner import backoff_s, execute_job, is_transient

__all__ = [
    "TASK_NAME",
    "BrokerSetupError",
    "CeleryDispatcher",
    "app",
    "celery_config",
    "check_transport",
    "configure",
    "publish",
    "queue_depth",
    "run_job",
]

TASK_NAME = "soakline.run_job"
MAX_TASK_RETRIES = 12
# Broker errors a retry can get past, besides the database's (runner.is_transient).
BROKER_ERRORS: tuple[type[BaseException], ...] = (
    kombu.exceptions.OperationalError,  # broker unreachable while publishing a retry
    redis.exceptions.ConnectionError,
    redis.exceptions.TimeoutError,
)
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


app = Celery("soakline")
app.add_defaults(lambda: celery_config(get_settings()))


class BrokerSetupError(RuntimeError):
    """The broker's transport cannot be loaded in this installation (a missing package)."""


def check_transport(settings: Settings) -> None:
    """Load the broker's transport now, so that a missing package stops the process at start-up with a
    message, instead of failing each publish later (kombu imports its transport on first use)."""
    from kombu.transport import resolve_transport

    if settings.broker_url is None:
        return
    scheme = settings.broker_url.split("://", 1)[0]
    try:
        resolve_transport(scheme)
    except ImportError as exc:
        raise BrokerSetupError(
            f"the {scheme}:// broker transport cannot be loaded ({type(exc).__name__}: {exc}); "
            "reinstall soakline with its dependencies (`pip install -e .` brings celery[redis])"
        ) from None


def configure(settings: Settings) -> None:
    """Point this process's app at ``settings`` instead of the environment (API built from settings)."""
    check_transport(settings)
    wanted = celery_config(settings)
    if all(app.conf.get(key) == value for key, value in wanted.items()):
        return
    app.conf.update(wanted)
    # Forget the connection pool made for the old URL (kombu keeps pools per URL; closing it would
    # break them for anyone else): Celery does the same after a fork.
    app._after_fork()


# -- the task -----------------------------------------------------------------------------------------


# Celery's decorator is untyped; the function below is fully annotated.
@app.task(  # type: ignore[untyped-decorator]
    name=TASK_NAME, bind=True, acks_late=True, reject_on_worker_lost=True, ignore_result=True
)
def run_job(self: Task[Any, Any], job_id: int) -> str:
    """The job id is the whole message; everything else is read from the database."""
    settings = get_settings()
    # The task id stays the same on this task's own retries: a retry takes its job back at once.
    owner = f"celery:{self.request.id or job_id}"
    try:
        return str(execute_job(job_id, settings, owner=owner, relay=CeleryDispatcher(settings)))
    except Exception as exc:
        retryable = is_transient(exc) or isinstance(exc, BROKER_ERRORS)
        if not retryable or self.request.retries >= MAX_TASK_RETRIES:
            # Not retryable here: the job row keeps its deadline and the sweeper queues it again.
            raise
        delay = backoff_s(self.request.retries, settings.retry_backoff_max_s)
        log.warning("job %s: transient %s, retry in %.1f s", job_id, type(exc).__name__, delay)
        raise self.retry(exc=exc, countdown=delay, max_retries=MAX_TASK_RETRIES) from None


# -- publishing ---------------------------------------------------------------------------------------


def publish(job_ids: Sequence[int], settings: Settings | None = None) -> list[int]:
    """Send one message per job id; returns the ids that could not be sent.

    Never raises: the jobs are committed already, and whatever stops a message (the broker down, a
    refused connection, anything else) leaves them to the sweeper, which sends them once the broker
    answers; ``GET /health`` says the broker is down meanwhile.
    """
    ids = list(job_ids)
    settings = settings or get_settings()
    sent = 0
    try:
        # One pooled producer (one connection) for the whole list, not one per message.
        with app.producer_or_acquire() as producer:
            for job_id in ids:
                run_job.apply_async((job_id,), queue=settings.queue, producer=producer)
                sent += 1
    except Exception as exc:
        log.warning(
            "broker unreachable (%s: %s): %d job(s) left for the sweeper",
            type(exc).__name__,
            exc,
            len(ids) - sent,
        )
        return ids[sent:]
    return []


def queue_depth(settings: Settings) -> int | None:
    """Messages waiting in the broker queue, None when the broker cannot be asked."""
    try:
        with app.connection_for_write() as conn:
            conn.ensure_connection(max_retries=1)
            return int(conn.default_channel.queue_declare(queue=settings.queue, passive=True).message_count)
    except Exception as exc:  # a missing queue is an empty one; anything else means "don't know"
        if "NOT_FOUND" in str(exc) or "no queue" in str(exc).lower():
            return 0
        log.warning("cannot read the depth of queue %s: %s", settings.queue, exc)
        return None


class CeleryDispatcher:
    """Publishes job ids to the broker; ids it cannot send are made stale at once, for the sweeper."""

    def __init__(self, settings: Settings) -> None:
        self.settings = settings

    def __call__(self, job_ids: Sequence[int], /) -> list[int]:
        unsent = publish(job_ids, self.settings)
        if unsent:
            try:
                with session_scope(session_factory(self.settings)) as session:
                    jobs_repo.mark_unsent(session, unsent)
            except Exception as exc:  # their deadline then runs out as usual
                log.warning("could not mark %d unsent job(s): %s", len(unsent), exc)
        return unsent

    def backlog(self) -> int | None:
        return queue_depth(self.settings)


# -- worker start-up ----------------------------------------------------------------------------------


def _prepare_store(**_: Any) -> None:
    """Before the pool starts: insist on a broker, wait for the database, migrate it."""
    settings = get_settings()
    if settings.broker_url is None:
        raise SystemExit(
            "SOAKLINE_BROKER_URL is not set: a Celery worker needs a broker "
            "(e.g. redis://127.0.0.1:6379/0). Without one, `soakline serve` runs jobs itself."
        )
    try:
        check_transport(settings)
    except BrokerSetupError as exc:
        raise SystemExit(str(exc)) from None
    wait_for_database(settings, log=log.warning)
    migrate(settings)


def _fresh_connections(**_: Any) -> None:
    """A forked pool process must not share the parent's database sockets."""
    engine_for(get_settings().database_url).dispose(close=False)


_sweeper: Sweeper | None = None


def _start_sweeper(**_: Any) -> None:
    """Each worker also sweeps: stale jobs are re-queued even when no API process is running."""
    global _sweeper
    settings = get_settings()
    _sweeper = Sweeper(settings, CeleryDispatcher(settings))
    _sweeper.start()


def _stop_sweeper(**_: Any) -> None:
    if _sweeper is not None:
        _sweeper.stop()


# Connected by call rather than decorator so that the handlers keep their type signatures.
worker_init.connect(_prepare_store, weak=False)
worker_process_init.connect(_fresh_connections, weak=False)
worker_ready.connect(_start_sweeper, weak=False)
worker_shutdown.connect(_stop_sweeper, weak=False)
