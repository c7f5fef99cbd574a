"""Start a real service process for the tests: ``launch.py worker ARGS`` or ``launch.py cli ARGS``.

``worker`` is ``celery -A workers worker ARGS`` under the supervisor ``soakline worker`` uses, and
``cli`` the service CLI (serve, token, submit...),
plus one test-only hook: ``SOAKLINE_TEST_PART_DELAY_S``, a pause before each part, so that a test can
kill or cut things off while a batch is surely still in flight however fast the engine becomes.
"""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import workers.jobs as jobs

delay = float(os.environ.get("SOAKLINE_TEST_PART_DELAY_S", "0"))
if delay > 0:
    real_part, real_batch = jobs.run_part, jobs.run_batch

    def slow_run_part(batch: Any, part_id: str) -> dict[str, Any]:
        time.sleep(delay)
        return dict(real_part(batch, part_id))

    def slow_run_batch(batch: Any) -> dict[str, Any]:  # a group: the pause for each of its parts
        time.sleep(delay * len(batch.parts))
        return dict(real_batch(batch))

    jobs.run_part = slow_run_part  # type: ignore[assignment]
    jobs.run_batch = slow_run_batch  # type: ignore[assignment]


def main() -> None:
    if sys.argv[1] == "worker":  # as `soakline worker` runs it: a supervised child
        from scheduler.supervise import supervise

        sys.exit(supervise([sys.executable, __file__, "celery-worker", *sys.argv[2:]]))
    elif sys.argv[1] == "celery-worker":
        from workers.celery_app import app

        app.worker_main(["worker", *sys.argv[2:]])
    else:
        import typer

        from scheduler.service_cli import register

        cli = typer.Typer()
        register(cli)
        cli(sys.argv[2:], prog_name="soakline")


if __name__ == "__main__":
    main()
