"""The computation side of soakline: the thermal engine, target checks, and the Celery app and tasks.

``celery -A workers worker`` finds the Celery app as ``workers.celery``; it is imported only when asked
for, so that using the engine never loads Celery or reads the service settings.
"""

from __future__ import annotations

from typing import Any


def __getattr__(name: str) -> Any:
    if name in ("celery", "celery_app"):
        from workers.celery_app import app as celery_app

        return celery_app
    raise AttributeError(f"module 'workers' has no attribute {name!r}")
