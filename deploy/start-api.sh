#!/bin/sh
# Start the soakline API on this machine: waits for the database, migrates it, then serves.
# Usage: deploy/start-api.sh [ENV_FILE] [extra `soakline serve` options, e.g. --port 8001]
set -eu
if [ "$#" -gt 0 ] && [ -f "$1" ]; then
    set -a; . "$1"; set +a
    shift
fi
exec soakline serve --host "${SOAKLINE_HOST:-127.0.0.1}" --port "${SOAKLINE_PORT:-8000}" "$@"
