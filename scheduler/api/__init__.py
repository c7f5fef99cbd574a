"""HTTP API of soakline (FastAPI). Build it with :func:`create_app`; run it with ``soakline serve``.

``uvicorn --factory scheduler.api:create_app`` works too.
"""

from scheduler.api.app import create_app

__all__ = ["create_app"]
