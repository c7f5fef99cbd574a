"""Keep a worker process running: start it as a child, start it again when it dies on its own.

``soakline worker`` runs the Celery worker under :func:`supervise`. A Celery worker can stop with an
"unrecoverable error" when its broker connection breaks at an unlucky moment (seen with kombu 5.7
when Redis restarts while a finished task is being acknowledged); its jobs are safe in the database
either way, but a worker that stays down computes nothing until someone restarts it. So the child is
started again after a pause (doubling up to 30 s while it keeps failing fast). SIGTERM and SIGINT are
passed to the child, and then the supervisor exits with the child's status: a stop is never undone.
"""

from __future__ import annotations

import logging
import signal
import subprocess
import sys
import time
from collections.abc import Callable, Sequence
from types import FrameType

__all__ = ["supervise"]

log = logging.getLogger(__name__)

_FIRST_PAUSE_S = 2.0
_MAX_PAUSE_S = 30.0
_HEALTHY_RUN_S = 60.0  # a child that ran this long before dying starts again after the first pause


def supervise(args: Sequence[str], say: Callable[[str], None] = print) -> int:
    """Run ``args`` until it exits by itself with status 0 or this process is told to stop."""
    stopping = False
    child: subprocess.Popen[bytes] | None = None

    def forward(signum: int, _frame: FrameType | None) -> None:
        nonlocal stopping
        stopping = True
        if child is not None and child.poll() is None:
            child.send_signal(signum)

    previous = {sig: signal.signal(sig, forward) for sig in (signal.SIGTERM, signal.SIGINT)}
    pause = _FIRST_PAUSE_S
    try:
        while True:
            started = time.monotonic()
            child = subprocess.Popen(list(args))
            code = child.wait()
            code = 128 - code if code < 0 else code  # killed by a signal: the shell's status for it
            if stopping or code == 0:
                return code
            pause = _FIRST_PAUSE_S if time.monotonic() - started > _HEALTHY_RUN_S else pause
            say(f"worker stopped with status {code}; starting it again in {pause:.0f} s")
            deadline = time.monotonic() + pause
            while not stopping and time.monotonic() < deadline:
                time.sleep(0.2)
            if stopping:
                return code
            pause = min(2 * pause, _MAX_PAUSE_S)
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)


def main() -> None:  # pragma: no cover - `python -m scheduler.supervise CMD...`
    sys.exit(supervise(sys.argv[1:]))


if __name__ == "__main__":  # pragma: no cover
    main()
