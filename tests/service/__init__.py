"""The service on the real PostgreSQL and Redis: API, jobs, Celery workers, outages, settings and CLI."""
