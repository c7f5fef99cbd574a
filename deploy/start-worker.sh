#!/bin/sh
# Start a soakline Celery worker on this machine (needs SOAKLINE_BROKER_URL and SOAKLINE_DATABASE_URL).
# Usage: deploy/start-worker.sh [ENV_FILE] [extra options, e.g. --concurrency 4]
set -eu
if [ "$#" -gt 0 ] && [ -f "$1" ]; then
    set -a; . "$1"; set +a
    shift
fi
exec soakline worker --concurrency "${SOAKLINE_WORKER_CONCURRENCY:-2}" "$@"
