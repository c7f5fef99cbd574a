"""Review pages served by the API process: server-rendered HTML for signing in, reading batches and
parts, recording dispositions and rerunning schedules. Mount with ``app.include_router(web.router)``."""

from scheduler.web.pages import error_page, router

__all__ = ["error_page", "router"]
