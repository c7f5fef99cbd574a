"""``GET /health``: is the database answering, and the broker when one is configured (no token needed)."""

from __future__ import annotations

from fastapi import APIRouter
from fastapi.responses import JSONResponse
from sqlalchemy import text

from models.store import engine_for
from scheduler.api.deps import SettingsDep
from scheduler.api.errors import RETRY_AFTER_S
from scheduler.api.schemas import HealthPublic

router = APIRouter(tags=["health"])


def _broker_state(url: str) -> str:
    from kombu.connection import Connection

    try:
        options = {"socket_connect_timeout": 2}
        with Connection(url, connect_timeout=2, transport_options=options) as conn:  # type: ignore[no-untyped-call]
            conn.ensure_connection(max_retries=1, timeout=2)
        return "ok"
    except Exception as exc:
        return f"unreachable: {type(exc).__name__}"


@router.get("/health", response_model=HealthPublic, responses={503: {"model": HealthPublic}})
def health(settings: SettingsDep) -> JSONResponse:
    """200 when every configured dependency answers, 503 (same body) when one does not."""
    try:
        with engine_for(settings.database_url).connect() as conn:
            conn.execute(text("SELECT 1"))
        database = "ok"
    except Exception as exc:
        database = f"unreachable: {type(exc).__name__}"
    broker = "not configured" if settings.broker_url is None else _broker_state(settings.broker_url)
    ok = database == "ok" and broker in ("ok", "not configured")
    body = HealthPublic(
        status="ok" if ok else "degraded",
        database=database,
        broker=broker,
        mode="in-process" if settings.broker_url is None else "celery",
    )
    headers = None if ok else {"Retry-After": str(RETRY_AFTER_S)}
    return JSONResponse(body.model_dump(), status_code=200 if ok else 503, headers=headers)
