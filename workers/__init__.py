"""The computation side of soakline, the middle layer: the thermal engine (``thermal``), the spec to
engine conversion (``convert``), target checks (``targets``), the batch jobs of the CLI and the service
(``jobs``), running a stored job (``runner``), the background loops (``background``), the dispatcher
interface (``dispatch``) and the thin Celery module (``celery_app``).

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
